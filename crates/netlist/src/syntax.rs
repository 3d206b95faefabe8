//! The syntax tree: statements as written, every item with its byte span. Nothing is
//! resolved or checked here beyond the grammar; that is elaboration's job.

use crate::circuit::Span;
use crate::units::Literal;

/// A name as written, with its span.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Ident {
    pub name: String,
    pub span: Span,
}

/// A binary operator.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum BinOp {
    Add,
    Sub,
    Mul,
    Div,
    Pow,
}

/// A built-in function.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Func {
    Sqrt,
    Exp,
    Ln,
    Log10,
    Abs,
    Min,
    Max,
}

impl Func {
    pub(crate) fn from_name(name: &str) -> Option<Func> {
        Some(match name {
            "sqrt" => Func::Sqrt,
            "exp" => Func::Exp,
            "ln" => Func::Ln,
            "log10" => Func::Log10,
            "abs" => Func::Abs,
            "min" => Func::Min,
            "max" => Func::Max,
            _ => return None,
        })
    }

    pub(crate) fn arity(self) -> usize {
        match self {
            Func::Min | Func::Max => 2,
            _ => 1,
        }
    }
}

/// An expression node.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum ExprKind {
    Number(Literal),
    Name(String),
    Pi,
    Neg(Box<Expr>),
    Binary(BinOp, Box<Expr>, Box<Expr>),
    Call(Func, Vec<Expr>),
}

/// An expression with its span.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Expr {
    pub kind: ExprKind,
    pub span: Span,
}

/// The value of a passive part: an expression, or `?` (to be fitted) with an optional
/// range.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum PartValue {
    Expr(Expr),
    Fit {
        range: Option<(Expr, Expr)>,
        span: Span,
    },
}

/// The part keywords.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum PartKeyword {
    Resistor,
    Capacitor,
    Inductor,
    Vsrc,
    Isrc,
    Vcvs,
    Vccs,
    Opamp,
}

impl PartKeyword {
    pub(crate) fn from_word(word: &str) -> Option<PartKeyword> {
        Some(match word {
            "resistor" => PartKeyword::Resistor,
            "capacitor" => PartKeyword::Capacitor,
            "inductor" => PartKeyword::Inductor,
            "vsrc" => PartKeyword::Vsrc,
            "isrc" => PartKeyword::Isrc,
            "vcvs" => PartKeyword::Vcvs,
            "vccs" => PartKeyword::Vccs,
            "opamp" => PartKeyword::Opamp,
            _ => return None,
        })
    }

    pub(crate) fn word(self) -> &'static str {
        match self {
            PartKeyword::Resistor => "resistor",
            PartKeyword::Capacitor => "capacitor",
            PartKeyword::Inductor => "inductor",
            PartKeyword::Vsrc => "vsrc",
            PartKeyword::Isrc => "isrc",
            PartKeyword::Vcvs => "vcvs",
            PartKeyword::Vccs => "vccs",
            PartKeyword::Opamp => "opamp",
        }
    }

    /// The options this kind accepts, in canonical order.
    pub(crate) fn options(self) -> &'static [&'static str] {
        match self {
            PartKeyword::Resistor | PartKeyword::Inductor => &["tol"],
            PartKeyword::Capacitor => &["tol", "rated", "polar"],
            PartKeyword::Vsrc => &["phase", "bias", "rs"],
            PartKeyword::Isrc => &["phase", "bias", "rp"],
            PartKeyword::Vcvs => &["gain"],
            PartKeyword::Vccs => &["gm"],
            PartKeyword::Opamp => &["gain", "gbw", "swing"],
        }
    }

    /// Whether the kind has a main value after its nodes (required for passives,
    /// optional for independent sources).
    pub(crate) fn has_value(self) -> bool {
        matches!(
            self,
            PartKeyword::Resistor
                | PartKeyword::Capacitor
                | PartKeyword::Inductor
                | PartKeyword::Vsrc
                | PartKeyword::Isrc
        )
    }

    /// How many nodes go in the first bracket.
    pub(crate) fn n_nodes(self) -> usize {
        if self == PartKeyword::Opamp { 1 } else { 2 }
    }

    /// Whether a `from (a, b)` bracket follows.
    pub(crate) fn has_from(self) -> bool {
        matches!(
            self,
            PartKeyword::Vcvs | PartKeyword::Vccs | PartKeyword::Opamp
        )
    }
}

/// One option on a part line.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum PartOption {
    /// `tol x` or `tol lo .. hi`.
    Tol(Expr, Option<Expr>),
    Polar,
    /// `swing lo .. hi`.
    Swing(Expr, Expr),
    /// Any option with one value: `rated`, `phase`, `bias`, `rs`, `rp`, `gain`, `gm`, `gbw`.
    Value(&'static str, Expr),
}

/// A part line.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct PartStmt {
    pub keyword: PartKeyword,
    pub name: Ident,
    pub nodes: Vec<Ident>,
    pub from: Vec<Ident>,
    pub value: Option<PartValue>,
    pub options: Vec<(PartOption, Span)>,
}

/// `use` and `chain` lines.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct UseStmt {
    /// `Some((n, span))` for `chain n`.
    pub chain: Option<(u64, Span)>,
    pub block: Ident,
    pub name: Ident,
    pub nodes: Vec<Ident>,
    pub nodes_span: Span,
    pub overrides: Vec<(Ident, Expr)>,
}

/// A `sweep` line.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum SweepStmt {
    Log {
        start: Expr,
        stop: Expr,
        per_decade: Expr,
    },
    Linear {
        start: Expr,
        stop: Expr,
        step: Expr,
    },
    List(Vec<Expr>),
}

/// What a `probe` measures, as written.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum ProbeWhat {
    Node(Ident),
    Ratio(Ident, Ident),
    Difference(Ident, Ident),
    Current(Ident),
    Zin,
    Zout(Ident),
}

/// A `probe` line.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct ProbeStmt {
    pub name: Ident,
    pub what: ProbeWhat,
    pub reference: Option<Expr>,
}

/// The target of a metric.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum TargetSyntax {
    Name(Ident),
    Current(Ident),
}

/// One argument of a metric after the target.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum MetricArg {
    Value(Expr),
    Ref(Expr, Span),
    Level(Expr, Span),
}

/// A comparison as written.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum CmpSyntax {
    Less(Expr),
    LessEqual(Expr),
    Greater(Expr),
    GreaterEqual(Expr),
    Equal(Expr, Option<Expr>),
    Within(Expr, Expr),
}

/// An `expect` line.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct ExpectStmt {
    pub metric: Ident,
    pub target: TargetSyntax,
    pub args: Vec<MetricArg>,
    pub comparison: CmpSyntax,
}

/// A block definition.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct BlockDef {
    pub name: Ident,
    pub pins: Vec<Ident>,
    pub params: Vec<(Ident, Expr)>,
    pub body: Vec<Stmt>,
}

/// One statement.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum StmtKind {
    Title(String),
    Let(Ident, Expr),
    Part(PartStmt),
    Drive(Ident),
    Block(BlockDef),
    /// `block` header (only between parsing and grouping).
    BlockStart(BlockDef),
    /// `end` (only between parsing and grouping).
    End,
    Use(UseStmt),
    Sweep(SweepStmt),
    Probe(ProbeStmt),
    Expect(ExpectStmt),
}

/// A statement with the span of its line (without comment and trailing blanks).
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Stmt {
    pub kind: StmtKind,
    pub span: Span,
}
