//! The syntax tree: statements as written, every item with its byte span. Nothing is
//! resolved or checked here beyond the grammar; that is elaboration's job.

use crate::circuit::Span;
use crate::units::Literal;

/// A name as written, with its span.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Ident<'s> {
    pub name: &'s str,
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
pub(crate) enum ExprKind<'s> {
    Number(Literal<'s>),
    Name(&'s str),
    Pi,
    Neg(Box<Expr<'s>>),
    Binary(BinOp, Box<Expr<'s>>, Box<Expr<'s>>),
    Call(Func, Vec<Expr<'s>>),
}

/// An expression with its span.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Expr<'s> {
    pub kind: ExprKind<'s>,
    pub span: Span,
}

/// The value of a passive part: an expression, or `?` (to be fitted) with an optional
/// range.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum PartValue<'s> {
    Expr(Expr<'s>),
    Fit {
        range: Option<(Expr<'s>, Expr<'s>)>,
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
pub(crate) enum PartOption<'s> {
    /// `tol x` or `tol lo .. hi`.
    Tol(Expr<'s>, Option<Expr<'s>>),
    Polar,
    /// `swing lo .. hi`.
    Swing(Expr<'s>, Expr<'s>),
    /// Any option with one value: `rated`, `phase`, `bias`, `rs`, `rp`, `gain`, `gm`, `gbw`.
    Value(&'static str, Expr<'s>),
}

/// A part line.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct PartStmt<'s> {
    pub keyword: PartKeyword,
    pub name: Ident<'s>,
    pub nodes: Vec<Ident<'s>>,
    pub from: Vec<Ident<'s>>,
    pub value: Option<PartValue<'s>>,
    pub options: Vec<(PartOption<'s>, Span)>,
}

/// `use` and `chain` lines.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct UseStmt<'s> {
    /// `Some((n, span))` for `chain n`.
    pub chain: Option<(u64, Span)>,
    pub block: Ident<'s>,
    pub name: Ident<'s>,
    pub nodes: Vec<Ident<'s>>,
    pub nodes_span: Span,
    pub overrides: Vec<(Ident<'s>, Expr<'s>)>,
}

/// A `sweep` line.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum SweepStmt<'s> {
    Log {
        start: Expr<'s>,
        stop: Expr<'s>,
        per_decade: Expr<'s>,
    },
    Linear {
        start: Expr<'s>,
        stop: Expr<'s>,
        step: Expr<'s>,
    },
    List(Vec<Expr<'s>>),
}

/// What a `probe` measures, as written.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum ProbeWhat<'s> {
    Node(Ident<'s>),
    Ratio(Ident<'s>, Ident<'s>),
    Difference(Ident<'s>, Ident<'s>),
    Current(Ident<'s>),
    Zin,
    Zout(Ident<'s>),
}

/// A `probe` line.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct ProbeStmt<'s> {
    pub name: Ident<'s>,
    pub what: ProbeWhat<'s>,
    pub reference: Option<Expr<'s>>,
}

/// The target of a metric.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum TargetSyntax<'s> {
    Name(Ident<'s>),
    Current(Ident<'s>),
}

/// One argument of a metric after the target.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum MetricArg<'s> {
    Value(Expr<'s>),
    Ref(Expr<'s>, Span),
    Level(Expr<'s>, Span),
}

/// A comparison as written.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum CmpSyntax<'s> {
    Less(Expr<'s>),
    LessEqual(Expr<'s>),
    Greater(Expr<'s>),
    GreaterEqual(Expr<'s>),
    Equal(Expr<'s>, Option<Expr<'s>>),
    Within(Expr<'s>, Expr<'s>),
}

/// An `expect` line.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct ExpectStmt<'s> {
    pub metric: Ident<'s>,
    pub target: TargetSyntax<'s>,
    pub args: Vec<MetricArg<'s>>,
    pub comparison: CmpSyntax<'s>,
}

/// A block definition.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct BlockDef<'s> {
    pub name: Ident<'s>,
    pub pins: Vec<Ident<'s>>,
    pub params: Vec<(Ident<'s>, Expr<'s>)>,
    pub body: Vec<Stmt<'s>>,
}

/// One statement.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum StmtKind<'s> {
    Title(String),
    Let(Ident<'s>, Expr<'s>),
    Part(PartStmt<'s>),
    Drive(Ident<'s>),
    Block(BlockDef<'s>),
    /// `block` header (only between parsing and grouping).
    BlockStart(BlockDef<'s>),
    /// `end` (only between parsing and grouping).
    End,
    Use(UseStmt<'s>),
    Sweep(SweepStmt<'s>),
    Probe(ProbeStmt<'s>),
    Expect(ExpectStmt<'s>),
}

/// A statement with the span of its line (without comment and trailing blanks).
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Stmt<'s> {
    pub kind: StmtKind<'s>,
    pub span: Span,
}
