//! Elaboration: from the syntax tree to the flat, validated [`Circuit`].
//!
//! Evaluates `let`s (with `--set` overrides) and tracks dimensions, expands `use` and
//! `chain` with qualified names, resolves every name, checks values, and runs the
//! graph checks (a path to `gnd` for every node) and the warnings (single connection,
//! unused `let`, shorted part). Every problem becomes a [`Diagnostic`]; elaboration
//! goes on after an error so one pass reports them all.

#![allow(clippy::single_match_else)] // a `match` with a diagnostic in its `None` arm reads better here

use crate::circuit::{
    Circuit, Comparison, Deviation, Expectation, FitRange, Metric, MetricKind, MetricOptions,
    NodeId, Part, PartId, PartKind, Probe, ProbeId, ProbeKind, Span, Sweep, Target, Tolerance,
    Unit,
};
use crate::diagnostic::{Diagnostic, DiagnosticKind};
use crate::syntax::{
    BinOp, BlockDef, CmpSyntax, ExpectStmt, Expr, ExprKind, Func, Ident, MetricArg, PartKeyword,
    PartOption, PartStmt, PartValue, ProbeStmt, ProbeWhat, Stmt, StmtKind, SweepStmt, TargetSyntax,
    UseStmt,
};
use crate::units::{
    AMPERE, DIMENSIONLESS, Dim, FARAD, HENRY, HERTZ, OHM, SECOND, SIEMENS, VOLT, format_number,
};
use std::borrow::Cow;
use std::collections::{HashMap, HashSet};
use std::hash::{BuildHasherDefault, Hasher};

/// FNV-1a: names are short and not adversarial, and SipHash showed up in profiles of
/// 100 000-part files.
struct Fnv(u64);

impl Default for Fnv {
    fn default() -> Self {
        Fnv(0xcbf2_9ce4_8422_2325)
    }
}

impl Hasher for Fnv {
    fn write(&mut self, bytes: &[u8]) {
        for &b in bytes {
            self.0 ^= u64::from(b);
            self.0 = self.0.wrapping_mul(0x0100_0000_01b3);
        }
    }

    fn finish(&self) -> u64 {
        self.0
    }
}

/// The name tables' map type.
type Map<K, V> = HashMap<K, V, BuildHasherDefault<Fnv>>;

/// `prefix + name` without allocating at the top level.
fn qualify<'n>(prefix: &str, name: &'n str) -> Cow<'n, str> {
    if prefix.is_empty() {
        Cow::Borrowed(name)
    } else {
        Cow::Owned(format!("{prefix}{name}"))
    }
}

/// A value with its dimension.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Quantity {
    pub value: f64,
    pub dim: Dim,
}

/// Where a value stands, for messages (`the resistance of `R1``); formatted only when
/// there is something to report.
struct Place<'p> {
    what: &'p str,
    name: &'p str,
}

impl std::fmt::Display for Place<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "the {} of `{}`", self.what, self.name)
    }
}

/// A `let` binding.
#[derive(Debug)]
struct LetBinding {
    value: Option<Quantity>,
    span: Span,
    used: bool,
}

/// What a name in the one namespace refers to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum NameKind {
    Let,
    Block,
    Part,
    Node,
    Probe,
}

impl NameKind {
    fn word(self) -> &'static str {
        match self {
            NameKind::Let => "a `let`",
            NameKind::Block => "a block",
            NameKind::Part => "a part",
            NameKind::Node => "a node",
            NameKind::Probe => "a probe",
        }
    }
}

/// The names in scope while expanding a block body: its parameters and pins.
#[derive(Default)]
struct Scope {
    params: HashMap<String, Quantity>,
    pins: HashMap<String, NodeId>,
    prefix: String,
}

/// How deeply `use` may nest (a guard on top of the recursion check).
const MAX_USE_DEPTH: usize = 64;
/// The most stages a `chain` may have.
const MAX_CHAIN: u64 = 1_000_000;
/// The most points a sweep may have.
const MAX_SWEEP_POINTS: f64 = 10_000_000.0;

/// Elaborates the statements into a circuit, adding to `diagnostics`.
pub(crate) fn elaborate(
    source: &str,
    statements: &[Stmt],
    overrides: &[(String, Expr, String)],
    diagnostics: &mut Vec<Diagnostic>,
) -> Circuit {
    let mut e = Elaborator {
        source,
        diags: diagnostics,
        lets: Map::default(),
        let_order: Vec::new(),
        blocks: HashMap::new(),
        names: Map::default(),
        nodes: vec!["gnd".into()],
        node_index: std::iter::once(("gnd".to_string(), NodeId::GND)).collect(),
        node_span: vec![Span::default()],
        node_connections: vec![0],
        parts: Vec::new(),
        part_index: Map::default(),
        part_name_span: Vec::new(),
        bad_blocks: HashSet::new(),
        failed_parts: HashSet::new(),
        suggestions_left: 50,
        line_starts: std::cell::OnceCell::new(),
        has_fit: false,
    };
    e.names
        .insert("gnd".into(), (NameKind::Node, Span::default()));
    e.run(statements, overrides)
}

struct Elaborator<'a> {
    source: &'a str,
    diags: &'a mut Vec<Diagnostic>,
    lets: Map<String, LetBinding>,
    let_order: Vec<String>,
    blocks: HashMap<String, &'a BlockDef<'a>>,
    names: Map<String, (NameKind, Span)>,
    nodes: Vec<String>,
    node_index: Map<String, NodeId>,
    node_span: Vec<Span>,
    node_connections: Vec<u32>,
    parts: Vec<Part>,
    part_index: Map<String, PartId>,
    part_name_span: Vec<Span>,
    bad_blocks: HashSet<String>,
    failed_parts: HashSet<String>,
    suggestions_left: usize,
    line_starts: std::cell::OnceCell<Vec<usize>>,
    has_fit: bool,
}

impl<'a> Elaborator<'a> {
    fn error(
        &mut self,
        kind: DiagnosticKind,
        span: Span,
        message: impl Into<String>,
    ) -> &mut Diagnostic {
        self.diags.push(Diagnostic::error(kind, span, message));
        let last = self.diags.len() - 1;
        &mut self.diags[last]
    }

    /// The 1-based line of a span, from an index of line starts built on first use
    /// (so many duplicates do not rescan the file).
    fn line_of(&self, span: Span) -> usize {
        let starts = self.line_starts.get_or_init(|| {
            std::iter::once(0)
                .chain(self.source.match_indices('\n').map(|(i, _)| i + 1))
                .collect()
        });
        starts.partition_point(|&start| start <= span.start).max(1)
    }

    fn run(&mut self, statements: &'a [Stmt], overrides: &[(String, Expr, String)]) -> Circuit {
        let n = statements.len();
        self.names.reserve(2 * n);
        self.node_index.reserve(n);
        self.part_index.reserve(n);
        self.parts.reserve(n);
        self.nodes.reserve(n);
        self.node_span.reserve(n);
        self.node_connections.reserve(n);
        let mut title = None;
        for stmt in statements {
            if let StmtKind::Block(def) = &stmt.kind {
                self.declare(&def.name, NameKind::Block);
                self.blocks.entry(def.name.name.to_string()).or_insert(def);
            }
        }
        self.check_recursion();
        self.define_lets(statements, overrides);
        let root = Scope::default();
        for stmt in statements {
            match &stmt.kind {
                StmtKind::Part(p) => self.add_part(p, stmt.span, &root),
                StmtKind::Use(u) => self.expand_use(u, &root, 0),
                StmtKind::Title(t) => {
                    if title.is_some() {
                        self.error(DiagnosticKind::Repeated, stmt.span, "a second `title`")
                            .expected = Some("a file has one title at most".into());
                    } else {
                        title = Some(t.clone());
                    }
                }
                _ => {}
            }
        }
        self.renumber_nodes();
        let mut circuit = Circuit {
            title,
            parts: std::mem::take(&mut self.parts),
            ..Circuit::default()
        };
        if circuit.parts.is_empty() && !self.diags.iter().any(Diagnostic::is_error) {
            let end = self.source.len();
            self.error(
                DiagnosticKind::Empty,
                Span::new(end, end),
                "the circuit has no parts",
            )
            .expected = Some("expected at least one part (`resistor`, `vsrc`, …)".into());
        }
        self.analyses(statements, &mut circuit);
        self.graph_checks(&circuit.parts);
        self.unused_lets();
        circuit.nodes = std::mem::take(&mut self.nodes);
        let texts: Vec<String> = circuit
            .expectations
            .iter()
            .map(|e| crate::print::expectation_text(&circuit, e))
            .collect();
        for (e, text) in circuit.expectations.iter_mut().zip(texts) {
            e.text = text;
        }
        circuit
    }

    /// Numbers the nodes in order of first mention by the parts (as the flat, printed
    /// form would), so a circuit and its printed text agree on every `NodeId`. Nodes no
    /// part mentions keep their relative order at the end.
    fn renumber_nodes(&mut self) {
        let n = self.nodes.len();
        let mut new_id = vec![u32::MAX; n];
        new_id[0] = 0;
        let mut next = 1u32;
        for part in &mut self.parts {
            for_each_node(&mut part.kind, |node: &mut NodeId| {
                if new_id[node.index()] == u32::MAX {
                    new_id[node.index()] = next;
                    next += 1;
                }
            });
        }
        for id in &mut new_id {
            if *id == u32::MAX {
                *id = next;
                next += 1;
            }
        }
        if new_id
            .iter()
            .enumerate()
            .all(|(old, &new)| old as u32 == new)
        {
            return;
        }
        let map = |id: &mut NodeId| *id = NodeId(new_id[id.index()]);
        for part in &mut self.parts {
            for_each_node(&mut part.kind, map);
        }
        let mut nodes = vec![String::new(); n];
        let mut spans = vec![Span::default(); n];
        let mut connections = vec![0; n];
        for (old, &new) in new_id.iter().enumerate() {
            let new = new as usize;
            nodes[new] = std::mem::take(&mut self.nodes[old]);
            spans[new] = self.node_span[old];
            connections[new] = self.node_connections[old];
        }
        for id in self.node_index.values_mut() {
            map(id);
        }
        self.nodes = nodes;
        self.node_span = spans;
        self.node_connections = connections;
    }

    // ------------------------------------------------------------ names

    /// Enters a declared name into the one namespace; a duplicate is an error.
    fn declare(&mut self, id: &Ident, kind: NameKind) -> bool {
        self.declare_name(id.name, id.span, kind)
    }

    fn declare_name(&mut self, name: &str, span: Span, kind: NameKind) -> bool {
        if let Some(&(previous, previous_span)) = self.names.get(name) {
            let line = self.line_of(previous_span);
            let note = if previous_span == Span::default() {
                format!("`{name}` is the reference node")
            } else {
                format!("`{name}` is already {} (line {line})", previous.word())
            };
            self.error(
                DiagnosticKind::Duplicate,
                span,
                format!("the name `{name}` is used twice"),
            )
            .with_expected_note(
                "names of parts, nodes, lets, blocks and probes must all differ",
                note,
            );
            return false;
        }
        self.names.insert(name.to_string(), (kind, span));
        true
    }

    // ------------------------------------------------------------ lets and values

    fn define_lets(&mut self, statements: &[Stmt], overrides: &[(String, Expr, String)]) {
        let known: HashSet<&str> = statements
            .iter()
            .filter_map(|s| match &s.kind {
                StmtKind::Let(n, _) => Some(n.name),
                _ => None,
            })
            .collect();
        for (name, _, text) in overrides {
            if !known.contains(name.as_str()) {
                let mut d = Diagnostic::error(
                    DiagnosticKind::Override,
                    Span::default(),
                    format!("`--set {name}={text}`: the file has no `let {name}`"),
                );
                if let Some(close) = similar(name, known.iter().copied()) {
                    d.help = Some(format!("did you mean `{close}`?"));
                }
                self.diags.push(d);
            }
        }
        let root = Scope::default();
        for stmt in statements {
            let StmtKind::Let(n, expr) = &stmt.kind else {
                continue;
            };
            let value = match overrides.iter().rev().find(|(o, _, _)| o == n.name) {
                Some((_, over, text)) => self.eval_override(n, over, text),
                None => self.eval(expr, &root),
            };
            if self.declare(n, NameKind::Let) {
                self.lets.insert(
                    n.name.to_string(),
                    LetBinding {
                        value,
                        span: n.span,
                        used: false,
                    },
                );
                self.let_order.push(n.name.to_string());
            }
        }
    }

    /// Evaluates a `--set` value; its diagnostics point at the `let` it replaces.
    fn eval_override(&mut self, n: &Ident, over: &Expr, text: &str) -> Option<Quantity> {
        let before = self.diags.len();
        let value = self.eval(over, &Scope::default());
        for d in &mut self.diags[before..] {
            d.kind = DiagnosticKind::Override;
            d.message = format!("`--set {}={text}`: {}", n.name, d.message);
            d.span = n.span;
            d.expected = Some("the value set on the command line is not valid".into());
        }
        value
    }

    /// Evaluates an expression; `None` (with a diagnostic) when it has no value.
    fn eval(&mut self, e: &Expr, scope: &Scope) -> Option<Quantity> {
        let q = match &e.kind {
            ExprKind::Number(lit) => {
                let Ok(value) = lit.value() else {
                    self.error(
                        DiagnosticKind::NumberRange,
                        e.span,
                        "the number is out of range for a 64-bit float",
                    )
                    .expected = Some("out of range (about 1e-308 to 1e308)".into());
                    return None;
                };
                Quantity {
                    value,
                    dim: lit.dim(),
                }
            }
            ExprKind::Pi => Quantity {
                value: std::f64::consts::PI,
                dim: Dim::Si(DIMENSIONLESS),
            },
            ExprKind::Name(n) => return self.lookup(n, e.span, scope),
            ExprKind::Neg(inner) => {
                let q = self.eval(inner, scope)?;
                Quantity {
                    value: -q.value,
                    dim: q.dim,
                }
            }
            ExprKind::Binary(op, l, r) => {
                let (l, r) = (self.eval(l, scope), self.eval(r, scope));
                self.binary(*op, l?, r?, e)?
            }
            ExprKind::Call(func, args) => {
                let values: Vec<Option<Quantity>> =
                    args.iter().map(|a| self.eval(a, scope)).collect();
                let values: Option<Vec<Quantity>> = values.into_iter().collect();
                self.call(*func, &values?, e)?
            }
        };
        if q.value.is_finite() {
            Some(q)
        } else {
            self.error(
                DiagnosticKind::BadValue,
                e.span,
                "this expression has no finite value",
            )
            .expected =
                Some("expected a finite number (no division by zero, no logarithm of zero)".into());
            None
        }
    }

    fn lookup(&mut self, n: &str, span: Span, scope: &Scope) -> Option<Quantity> {
        if let Some(q) = scope.params.get(n) {
            return Some(*q);
        }
        if let Some(binding) = self.lets.get_mut(n) {
            binding.used = true;
            return binding.value;
        }
        let d = if self.suggestions_left > 0 {
            self.suggestions_left -= 1;
            unknown_value_name(n, span, self.let_names(scope))
        } else {
            unknown_value_name(n, span, std::iter::empty())
        };
        self.diags.push(d);
        None
    }

    fn let_names<'s>(&'s self, scope: &'s Scope) -> impl Iterator<Item = &'s str> {
        self.lets
            .keys()
            .map(String::as_str)
            .chain(scope.params.keys().map(String::as_str))
    }

    fn binary(&mut self, op: BinOp, l: Quantity, r: Quantity, e: &Expr) -> Option<Quantity> {
        let dim = match op {
            BinOp::Add | BinOp::Sub => Dim::add(l.dim, r.dim),
            BinOp::Mul => Dim::mul(l.dim, r.dim, false),
            BinOp::Div => Dim::mul(l.dim, r.dim, true),
            BinOp::Pow => return self.power(l, r, e),
        };
        let Some(dim) = dim else {
            let what = match op {
                BinOp::Add => "add",
                BinOp::Sub => "subtract",
                BinOp::Mul => "multiply",
                _ => "divide",
            };
            self.error(
                DiagnosticKind::Dimension,
                e.span,
                format!(
                    "cannot {what} {} and {}",
                    l.dim.describe(),
                    r.dim.describe()
                ),
            )
            .expected = Some(format!(
                "the two sides have different dimensions: {} and {}",
                l.dim, r.dim
            ));
            return None;
        };
        let value = match op {
            BinOp::Add => l.value + r.value,
            BinOp::Sub => l.value - r.value,
            BinOp::Mul => l.value * r.value,
            _ => l.value / r.value,
        };
        Some(Quantity { value, dim })
    }

    fn power(&mut self, base: Quantity, exponent: Quantity, e: &Expr) -> Option<Quantity> {
        if !exponent.dim.is_plain() {
            self.error(
                DiagnosticKind::Dimension,
                e.span,
                "an exponent must be a plain number",
            )
            .expected = Some(format!("expected a plain number, found {}", exponent.dim));
            return None;
        }
        let value = base.value.powf(exponent.value);
        if matches!(base.dim, Dim::Unknown | Dim::Si(DIMENSIONLESS)) {
            return Some(Quantity {
                value,
                dim: base.dim,
            });
        }
        let n = exponent.value;
        let dim = if n.fract() == 0.0 && n.abs() <= 127.0 {
            base.dim.powi(n as i32)
        } else {
            None
        };
        match dim {
            Some(dim) => Some(Quantity { value, dim }),
            None => {
                self.error(
                    DiagnosticKind::Dimension,
                    e.span,
                    format!(
                        "{} can only be raised to a whole power",
                        base.dim.describe()
                    ),
                )
                .expected = Some(format!(
                    "expected an integer exponent, found {}",
                    format_number(n)
                ));
                None
            }
        }
    }

    fn call(&mut self, func: Func, args: &[Quantity], e: &Expr) -> Option<Quantity> {
        let x = args[0];
        let dimensionless = |q: Quantity| {
            if q.dim == Dim::Unknown {
                Dim::Unknown
            } else {
                Dim::Si(DIMENSIONLESS)
            }
        };
        let (value, dim) = match func {
            Func::Sqrt => match x.dim.sqrt() {
                Some(dim) => (x.value.sqrt(), dim),
                None => {
                    self.error(
                        DiagnosticKind::Dimension,
                        e.span,
                        format!(
                            "the square root of {} has no dimension of whole powers",
                            x.dim.describe()
                        ),
                    )
                    .expected = Some(format!("expected even exponents, found {}", x.dim));
                    return None;
                }
            },
            Func::Exp | Func::Ln | Func::Log10 => {
                if !x.dim.is_plain() {
                    self.error(
                        DiagnosticKind::Dimension,
                        e.span,
                        "`exp`, `ln` and `log10` take a plain number",
                    )
                    .expected = Some(format!("expected a plain number, found {}", x.dim));
                    return None;
                }
                let v = match func {
                    Func::Exp => x.value.exp(),
                    Func::Ln => x.value.ln(),
                    _ => x.value.log10(),
                };
                (v, dimensionless(x))
            }
            Func::Abs => (x.value.abs(), x.dim),
            Func::Min | Func::Max => {
                let y = args[1];
                let Some(dim) = Dim::add(x.dim, y.dim) else {
                    self.error(
                        DiagnosticKind::Dimension,
                        e.span,
                        format!(
                            "cannot compare {} with {}",
                            x.dim.describe(),
                            y.dim.describe()
                        ),
                    )
                    .expected = Some(format!(
                        "both arguments need one dimension, found {} and {}",
                        x.dim, y.dim
                    ));
                    return None;
                };
                let v = if func == Func::Min {
                    x.value.min(y.value)
                } else {
                    x.value.max(y.value)
                };
                (v, dim)
            }
        };
        Some(Quantity { value, dim })
    }

    /// Evaluates a value that must fit `expected`; an error shows both dimensions.
    fn value_of(
        &mut self,
        e: &Expr,
        scope: &Scope,
        expected: Dim,
        place: &dyn std::fmt::Display,
    ) -> Option<f64> {
        let q = self.eval(e, scope)?;
        if q.dim.fits(expected) {
            return Some(q.value);
        }
        let note = match &e.kind {
            ExprKind::Name(n) => self.lets.get(*n).map(|b| {
                let line = self.line_of(b.span);
                format!(
                    "`{n}` is defined on line {line} as {}",
                    describe_quantity(q)
                )
            }),
            _ => None,
        };
        let d = self.error(
            DiagnosticKind::Dimension,
            e.span,
            format!(
                "{place} must be {}, but this is {}",
                expected.describe(),
                q.dim.describe()
            ),
        );
        d.expected = Some(format!("expected {}, found {}", expected.describe(), q.dim));
        if let Some(note) = note {
            d.notes.push(note);
        }
        None
    }

    /// Like [`Self::value_of`], and the value must be positive.
    fn positive(
        &mut self,
        e: &Expr,
        scope: &Scope,
        expected: Dim,
        place: &dyn std::fmt::Display,
    ) -> Option<f64> {
        let v = self.value_of(e, scope, expected, place)?;
        if v > 0.0 {
            return Some(v);
        }
        self.error(
            DiagnosticKind::BadValue,
            e.span,
            format!("{place} must be positive, not {}", format_number(v)),
        )
        .expected = Some(format!(
            "expected {} greater than zero",
            expected.describe()
        ));
        None
    }

    // ------------------------------------------------------------ parts

    fn node_id(&mut self, id: &Ident, scope: &Scope) -> NodeId {
        if id.name == "gnd" {
            self.node_connections[0] += 1;
            return NodeId::GND;
        }
        if let Some(&n) = scope.pins.get(id.name) {
            self.node_connections[n.index()] += 1;
            return n;
        }
        let qualified = qualify(&scope.prefix, id.name);
        if let Some(&n) = self.node_index.get(qualified.as_ref()) {
            self.node_connections[n.index()] += 1;
            return n;
        }
        let qualified = qualified.into_owned();
        if let Some(&(kind, _)) = self.names.get(&qualified) {
            self.error(
                DiagnosticKind::Duplicate,
                id.span,
                format!("`{qualified}` is {}, not a node", kind.word()),
            )
            .expected = Some("expected a node name".into());
        } else {
            self.names
                .insert(qualified.clone(), (NameKind::Node, id.span));
        }
        let n = NodeId(self.nodes.len() as u32);
        self.nodes.push(qualified.clone());
        self.node_index.insert(qualified, n);
        self.node_span.push(id.span);
        self.node_connections.push(1);
        n
    }

    fn uncounted_node(&mut self, id: &Ident, scope: &Scope) -> NodeId {
        let n = self.node_id(id, scope);
        self.node_connections[n.index()] -= 1;
        n
    }

    fn add_part(&mut self, p: &PartStmt, span: Span, scope: &Scope) {
        let name = qualify(&scope.prefix, p.name.name).into_owned();
        let nodes: Vec<NodeId> = p.nodes.iter().map(|n| self.node_id(n, scope)).collect();
        let from: Vec<NodeId> = p.from.iter().map(|n| self.node_id(n, scope)).collect();
        if nodes.len() != p.keyword.n_nodes()
            || from.len() != if p.keyword.has_from() { 2 } else { 0 }
        {
            let want = match p.keyword {
                PartKeyword::Opamp => "one output node, then `from (in+, in-)`",
                PartKeyword::Vcvs | PartKeyword::Vccs => "two output nodes, then `from (in+, in-)`",
                _ => "two nodes",
            };
            let at = p
                .nodes
                .first()
                .map_or(p.name.span, |n| n.span)
                .join(p.nodes.last().map_or(p.name.span, |n| n.span));
            self.error(
                DiagnosticKind::PinCount,
                at,
                if p.keyword.has_from() {
                    format!(
                        "{} `{}` connects {want}; this one has {} and {}",
                        article(p.keyword.word()),
                        p.keyword.word(),
                        nodes.len(),
                        from.len()
                    )
                } else {
                    format!(
                        "a `{}` connects {want}; this one has {}",
                        p.keyword.word(),
                        nodes.len()
                    )
                },
            )
            .expected = Some(format!("expected {want}"));
            return;
        }
        if !self.declare_name(&name, p.name.span, NameKind::Part) {
            return;
        }
        let Some(kind) = self.part_kind(p, &nodes, &from, scope) else {
            // Keep the name reserved, so later mentions do not add "unknown" errors.
            self.failed_parts.insert(name);
            return;
        };
        let id = PartId(self.parts.len() as u32);
        self.part_index.insert(name.clone(), id);
        self.part_name_span.push(p.name.span);
        if nodes.len() == 2 && nodes[0] == nodes[1] && !p.keyword.has_from() {
            let d = Diagnostic::warning(
                DiagnosticKind::ShortedPart,
                p.name.span,
                format!(
                    "both ends of `{name}` are on node `{}`",
                    self.nodes[nodes[0].index()]
                ),
            )
            .with_expected("this part does nothing");
            self.diags.push(d);
        }
        self.parts.push(Part { name, kind, span });
    }

    fn option<'p, 's>(p: &'p PartStmt<'s>, key: &str) -> Option<&'p PartOption<'s>> {
        p.options.iter().map(|(o, _)| o).find(|o| match o {
            PartOption::Tol(..) => key == "tol",
            PartOption::Polar => key == "polar",
            PartOption::Swing(..) => key == "swing",
            PartOption::Value(k, _) => *k == key,
        })
    }

    fn option_value(
        &mut self,
        p: &PartStmt,
        key: &str,
        scope: &Scope,
        dim: Dim,
        what: &str,
        positive: bool,
    ) -> Result<Option<f64>, ()> {
        let Some(PartOption::Value(_, e)) = Self::option(p, key) else {
            return Ok(None);
        };
        let place = Place {
            what,
            name: p.name.name,
        };
        let v = if positive {
            self.positive(e, scope, dim, &place)
        } else {
            self.value_of(e, scope, dim, &place)
        };
        v.map(Some).ok_or(())
    }

    fn part_kind(
        &mut self,
        p: &PartStmt,
        n: &[NodeId],
        from: &[NodeId],
        scope: &Scope,
    ) -> Option<PartKind> {
        let volt = Dim::Si(VOLT);
        let plain = Dim::Si(DIMENSIONLESS);
        Some(match p.keyword {
            PartKeyword::Resistor | PartKeyword::Capacitor | PartKeyword::Inductor => {
                let (dim, what) = match p.keyword {
                    PartKeyword::Resistor => (Dim::Si(OHM), "resistance"),
                    PartKeyword::Capacitor => (Dim::Si(FARAD), "capacitance"),
                    _ => (Dim::Si(HENRY), "inductance"),
                };
                let (value, fit) = self.passive_value(p, scope, dim, what);
                let tol = self.tolerance(p, scope);
                let rated = self.option_value(p, "rated", scope, volt, "voltage rating", true);
                let (value, tol, rated) = (value?, tol.ok()?, rated.ok()?);
                let (a, b) = (n[0], n[1]);
                match p.keyword {
                    PartKeyword::Resistor => PartKind::Resistor {
                        a,
                        b,
                        value,
                        tol,
                        fit,
                    },
                    PartKeyword::Capacitor => PartKind::Capacitor {
                        a,
                        b,
                        value,
                        tol,
                        fit,
                        rated,
                        polar: Self::option(p, "polar").is_some(),
                    },
                    _ => PartKind::Inductor {
                        a,
                        b,
                        value,
                        tol,
                        fit,
                    },
                }
            }
            PartKeyword::Vsrc | PartKeyword::Isrc => {
                let is_v = p.keyword == PartKeyword::Vsrc;
                let dim = if is_v { volt } else { Dim::Si(AMPERE) };
                let amplitude = match &p.value {
                    Some(PartValue::Expr(e)) => Some(self.positive(
                        e,
                        scope,
                        dim,
                        &Place {
                            what: "amplitude",
                            name: p.name.name,
                        },
                    )),
                    Some(PartValue::Fit { span, .. }) => {
                        self.error(
                            DiagnosticKind::Syntax,
                            *span,
                            "only a resistor, capacitor or inductor can be fitted",
                        )
                        .expected = Some("expected an amplitude".into());
                        Some(None)
                    }
                    None => None,
                };
                let phase = self.option_value(p, "phase", scope, Dim::Degree, "phase", false);
                let bias = self.option_value(p, "bias", scope, dim, "bias", false);
                let key = if is_v { "rs" } else { "rp" };
                let r = self.option_value(
                    p,
                    key,
                    scope,
                    Dim::Si(OHM),
                    if is_v {
                        "series resistance"
                    } else {
                        "parallel resistance"
                    },
                    true,
                );
                let amplitude = match amplitude {
                    Some(a) => Some(a?),
                    None => None,
                };
                let (phase_deg, bias, r) = (phase.ok()?.unwrap_or(0.0), bias.ok()?, r.ok()?);
                if is_v {
                    PartKind::VoltageSource {
                        pos: n[0],
                        neg: n[1],
                        amplitude,
                        phase_deg,
                        bias,
                        rs: r,
                    }
                } else {
                    PartKind::CurrentSource {
                        from: n[0],
                        to: n[1],
                        amplitude,
                        phase_deg,
                        bias,
                        rp: r,
                    }
                }
            }
            PartKeyword::Vcvs | PartKeyword::Vccs => {
                let is_v = p.keyword == PartKeyword::Vcvs;
                let (key, dim, what) = if is_v {
                    ("gain", plain, "gain")
                } else {
                    ("gm", Dim::Si(SIEMENS), "transconductance")
                };
                let value = self.option_value(p, key, scope, dim, what, false).ok()?;
                let Some(value) = value else {
                    self.error(
                        DiagnosticKind::Syntax,
                        p.name.span,
                        format!("a `{}` needs `{key}`", p.keyword.word()),
                    )
                    .expected = Some(format!("expected `{key} <value>` on this line"));
                    return None;
                };
                let (out_pos, out_neg, in_pos, in_neg) = (n[0], n[1], from[0], from[1]);
                if is_v {
                    PartKind::Vcvs {
                        out_pos,
                        out_neg,
                        in_pos,
                        in_neg,
                        gain: value,
                    }
                } else {
                    PartKind::Vccs {
                        out_pos,
                        out_neg,
                        in_pos,
                        in_neg,
                        gm: value,
                    }
                }
            }
            PartKeyword::Opamp => {
                let gain = self.option_value(p, "gain", scope, plain, "open-loop gain", true);
                let gbw =
                    self.option_value(p, "gbw", scope, Dim::Si(HERTZ), "gain-bandwidth", true);
                let swing = self.swing(p, scope);
                let (gain, gbw, swing) = (gain.ok()?, gbw.ok()?, swing.ok()?);
                if gbw.is_some() && gain.is_none() {
                    self.error(
                        DiagnosticKind::Syntax,
                        p.name.span,
                        "`gbw` needs `gain` too (the single-pole model)",
                    )
                    .expected = Some("add `gain <open-loop gain>`".into());
                    return None;
                }
                PartKind::OpAmp {
                    out: n[0],
                    in_pos: from[0],
                    in_neg: from[1],
                    gain,
                    gbw,
                    swing,
                }
            }
        })
    }

    fn passive_value(
        &mut self,
        p: &PartStmt,
        scope: &Scope,
        dim: Dim,
        what: &str,
    ) -> (Option<f64>, Option<FitRange>) {
        let place = Place {
            what,
            name: p.name.name,
        };
        match &p.value {
            Some(PartValue::Expr(e)) => (self.positive(e, scope, dim, &place), None),
            Some(PartValue::Fit { range, .. }) => {
                self.has_fit = true;
                let (low, high) = match range {
                    Some((lo, hi)) => {
                        let lo = self.positive(
                            lo,
                            scope,
                            dim,
                            &Place {
                                what: "lower end of the fit range",
                                name: p.name.name,
                            },
                        );
                        let hi_v = self.positive(
                            hi,
                            scope,
                            dim,
                            &Place {
                                what: "upper end of the fit range",
                                name: p.name.name,
                            },
                        );
                        let (Some(low), Some(high)) = (lo, hi_v) else {
                            return (None, None);
                        };
                        if low >= high {
                            self.error(
                                DiagnosticKind::BadValue,
                                hi.span,
                                "the fit range is empty",
                            )
                            .expected = Some(format!(
                                "expected an upper end above {}",
                                format_number(low)
                            ));
                            return (None, None);
                        }
                        (low, high)
                    }
                    None => default_fit_range(p.keyword),
                };
                (Some((low * high).sqrt()), Some(FitRange { low, high }))
            }
            None => {
                self.error(
                    DiagnosticKind::Syntax,
                    p.name.span,
                    format!("`{}` has no value", p.name.name),
                )
                .expected = Some(format!("expected {}", dim.describe()));
                (None, None)
            }
        }
    }

    fn tolerance(&mut self, p: &PartStmt, scope: &Scope) -> Result<Option<Tolerance>, ()> {
        let Some(PartOption::Tol(lo, hi)) = Self::option(p, "tol") else {
            return Ok(None);
        };
        let plain = Dim::Percent;
        let place = Place {
            what: "tolerance",
            name: p.name.name,
        };
        let low = self.value_of(lo, scope, plain, &place).ok_or(())?;
        let (lower, upper, span) = match hi {
            None => {
                if low < 0.0 {
                    self.error(
                        DiagnosticKind::BadValue,
                        lo.span,
                        "a symmetric tolerance cannot be negative",
                    )
                    .expected = Some("expected a band such as `5%`, or `-5% .. +10%`".into());
                    return Err(());
                }
                (-low, low, lo.span)
            }
            Some(hi) => (
                low,
                self.value_of(hi, scope, plain, &place).ok_or(())?,
                lo.span.join(hi.span),
            ),
        };
        if lower <= -1.0 || lower > upper {
            self.error(
                DiagnosticKind::BadValue,
                span,
                "the tolerance band is not valid",
            )
            .expected = Some("expected a lower end above -100% and not above the upper end".into());
            return Err(());
        }
        Ok(Some(Tolerance { lower, upper }))
    }

    fn swing(&mut self, p: &PartStmt, scope: &Scope) -> Result<Option<(f64, f64)>, ()> {
        let Some(PartOption::Swing(lo, hi)) = Self::option(p, "swing") else {
            return Ok(None);
        };
        let place = Place {
            what: "output swing",
            name: p.name.name,
        };
        let low = self.value_of(lo, scope, Dim::Si(VOLT), &place);
        let high = self.value_of(hi, scope, Dim::Si(VOLT), &place);
        let (low, high) = (low.ok_or(())?, high.ok_or(())?);
        if low >= high {
            self.error(
                DiagnosticKind::BadValue,
                lo.span.join(hi.span),
                "the swing range is empty",
            )
            .expected = Some("expected `low .. high` with low below high".into());
            return Err(());
        }
        Ok(Some((low, high)))
    }

    // ------------------------------------------------------------ blocks

    fn check_recursion(&mut self) {
        let mut names: Vec<&str> = self.blocks.keys().map(String::as_str).collect();
        names.sort_unstable();
        let mut reported = HashSet::new();
        for start in names {
            let mut path = vec![start.to_string()];
            if let Some((cycle, span)) = self.find_cycle(start, &mut path) {
                let key = {
                    let mut sorted = cycle.clone();
                    sorted.sort();
                    sorted
                };
                for b in &cycle {
                    self.bad_blocks.insert(b.clone());
                }
                if reported.insert(key) {
                    let chain = cycle.join(" → ");
                    let d = Diagnostic::error(
                        DiagnosticKind::RecursiveBlock,
                        span,
                        format!("block `{}` uses itself ({chain})", cycle[0]),
                    )
                    .with_expected("a block cannot use itself, directly or through others");
                    self.diags.push(d);
                }
            }
        }
    }

    /// A cycle through `path`'s last block, as the list of block names and the span of
    /// the `use` that closes it.
    fn find_cycle(&self, block: &str, path: &mut Vec<String>) -> Option<(Vec<String>, Span)> {
        let def = self.blocks.get(block)?;
        for stmt in &def.body {
            let StmtKind::Use(u) = &stmt.kind else {
                continue;
            };
            let target = &u.block.name;
            if target == &path[0] {
                let mut cycle = path.clone();
                cycle.push(target.to_string());
                return Some((cycle, u.block.span));
            }
            if path.iter().any(|p| p == target) || path.len() > MAX_USE_DEPTH {
                continue;
            }
            path.push(target.to_string());
            if let Some(found) = self.find_cycle(target, path) {
                return Some(found);
            }
            path.pop();
        }
        None
    }

    fn expand_use(&mut self, u: &UseStmt, scope: &Scope, depth: usize) {
        let Some(&def) = self.blocks.get(u.block.name) else {
            let mut d = Diagnostic::error(
                DiagnosticKind::UnknownName,
                u.block.span,
                format!("unknown block `{}`", u.block.name),
            )
            .with_expected("expected the name of a block defined in this file");
            if let Some(close) = similar(u.block.name, self.blocks.keys().map(String::as_str)) {
                d.help = Some(format!("did you mean `{close}`?"));
            }
            self.diags.push(d);
            return;
        };
        if self.bad_blocks.contains(u.block.name) || depth > MAX_USE_DEPTH {
            return;
        }
        let instance = format!("{}{}", scope.prefix, u.name.name);
        if !self.declare_name(&instance, u.name.span, NameKind::Part) {
            return;
        }
        let stages = match u.chain {
            None => None,
            Some((n, span)) => {
                if n == 0 || n > MAX_CHAIN {
                    self.error(
                        DiagnosticKind::BadValue,
                        span,
                        format!("a chain has 1 to {MAX_CHAIN} stages"),
                    )
                    .expected = Some("expected a whole number of stages, at least 1".into());
                    return;
                }
                if def.pins.len() != 2 {
                    self.error(
                        DiagnosticKind::PinCount,
                        u.block.span,
                        format!(
                            "`chain` needs a block with two pins (input, output); `{}` has {}",
                            def.name.name,
                            def.pins.len()
                        ),
                    )
                    .expected = Some("expected a two-pin block".into());
                    return;
                }
                Some(n)
            }
        };
        if u.nodes.len() != def.pins.len() {
            let pins: Vec<&str> = def.pins.iter().map(|p| p.name).collect();
            self.error(
                DiagnosticKind::PinCount,
                u.nodes_span,
                format!(
                    "block `{}` has {} pins ({}), this connects {}",
                    def.name.name,
                    pins.len(),
                    pins.join(", "),
                    u.nodes.len()
                ),
            )
            .expected = Some(format!("expected {} nodes", pins.len()));
            return;
        }
        let Some(params) = self.block_params(def, u, scope) else {
            return;
        };
        // The `use` line's own mention of a node is not a connection; the block's parts are.
        let outer: Vec<NodeId> = u
            .nodes
            .iter()
            .map(|n| self.uncounted_node(n, scope))
            .collect();
        match stages {
            None => {
                let inner = Scope {
                    params,
                    pins: def
                        .pins
                        .iter()
                        .map(|p| p.name.to_string())
                        .zip(outer)
                        .collect(),
                    prefix: format!("{instance}."),
                };
                self.expand_body(def, &inner, depth);
            }
            Some(n) => self.expand_chain(def, &instance, n, &outer, &params, depth),
        }
    }

    fn expand_chain(
        &mut self,
        def: &BlockDef,
        instance: &str,
        n: u64,
        outer: &[NodeId],
        params: &HashMap<String, Quantity>,
        depth: usize,
    ) {
        let mut input = outer[0];
        for k in 1..=n {
            let output = if k == n {
                outer[1]
            } else {
                let junction_name = format!("j{k}");
                let junction = Ident {
                    name: &junction_name,
                    span: def.name.span,
                };
                let scope = Scope {
                    prefix: format!("{instance}."),
                    ..Scope::default()
                };
                self.uncounted_node(&junction, &scope)
            };
            let stage = format!("{instance}.s{k}");
            self.names
                .insert(stage.clone(), (NameKind::Part, def.name.span));
            let inner = Scope {
                params: params.clone(),
                pins: HashMap::from([
                    (def.pins[0].name.to_string(), input),
                    (def.pins[1].name.to_string(), output),
                ]),
                prefix: format!("{stage}."),
            };
            self.expand_body(def, &inner, depth);
            input = output;
        }
    }

    fn expand_body(&mut self, def: &BlockDef, inner: &Scope, depth: usize) {
        for stmt in &def.body {
            match &stmt.kind {
                StmtKind::Part(p) => self.add_part(p, stmt.span, inner),
                StmtKind::Use(u) => self.expand_use(u, inner, depth + 1),
                _ => {}
            }
        }
    }

    fn block_params(
        &mut self,
        def: &BlockDef,
        u: &UseStmt,
        scope: &Scope,
    ) -> Option<HashMap<String, Quantity>> {
        let mut params = HashMap::new();
        let mut ok = true;
        for (name, e) in &u.overrides {
            if !def.params.iter().any(|(p, _)| p.name == name.name) {
                let names: Vec<&str> = def.params.iter().map(|(p, _)| p.name).collect();
                let mut d = Diagnostic::error(
                    DiagnosticKind::UnknownName,
                    name.span,
                    format!("block `{}` has no parameter `{}`", def.name.name, name.name),
                )
                .with_expected(if names.is_empty() {
                    "this block has no parameters".to_string()
                } else {
                    format!("expected one of {}", names.join(", "))
                });
                if let Some(close) = similar(name.name, names.iter().copied()) {
                    d.help = Some(format!("did you mean `{close}`?"));
                }
                self.diags.push(d);
                ok = false;
            } else if let Some(q) = self.eval(e, scope) {
                params.insert(name.name.to_string(), q);
            } else {
                ok = false;
            }
        }
        for (name, default) in &def.params {
            if !params.contains_key(name.name) {
                match self.eval(default, &Scope::default()) {
                    Some(q) => {
                        params.insert(name.name.to_string(), q);
                    }
                    None => ok = false,
                }
            }
        }
        ok.then_some(params)
    }

    // ------------------------------------------------------------ analyses

    fn analyses(&mut self, statements: &[Stmt], circuit: &mut Circuit) {
        let root = Scope::default();
        let mut drive_span = None;
        let mut sweep_span = None;
        for stmt in statements {
            match &stmt.kind {
                StmtKind::Drive(n) => {
                    if drive_span.is_some() {
                        self.error(DiagnosticKind::Repeated, stmt.span, "a second `drive`")
                            .expected = Some("a file has one `drive` at most".into());
                        continue;
                    }
                    drive_span = Some(stmt.span);
                    circuit.drive = self.resolve_drive(n, circuit);
                }
                StmtKind::Sweep(s) => {
                    if sweep_span.is_some() {
                        self.error(DiagnosticKind::Repeated, stmt.span, "a second `sweep`")
                            .expected = Some("a file has one `sweep` at most".into());
                        continue;
                    }
                    sweep_span = Some(stmt.span);
                    circuit.sweep = self.sweep(s, &root);
                }
                StmtKind::Probe(p) => {
                    if let Some(probe) = self.probe(p, stmt.span, circuit, &root) {
                        circuit.probes.push(probe);
                    }
                }
                _ => {}
            }
        }
        for stmt in statements {
            if let StmtKind::Expect(x) = &stmt.kind
                && let Some(e) = self.expectation(x, stmt.span, circuit, &root)
            {
                circuit.expectations.push(e);
            }
        }
    }

    fn resolve_drive(&mut self, n: &Ident, circuit: &Circuit) -> Option<PartId> {
        let Some(&id) = self.part_index.get(n.name) else {
            let names = self.candidates(|e| e.part_index.keys().cloned().collect());
            self.unknown(
                n,
                "a source",
                &names.iter().map(String::as_str).collect::<Vec<&str>>(),
            );
            return None;
        };
        if circuit.parts[id.index()].kind.is_ac_source() {
            return Some(id);
        }
        self.error(
            DiagnosticKind::BadValue,
            n.span,
            format!("`{}` cannot be the drive", n.name),
        )
        .expected = Some("expected a `vsrc` or `isrc` with an amplitude".into());
        None
    }

    /// Names to search for a did-you-mean; empty once 50 searches were made, so a
    /// file full of unknown names stays linear.
    fn candidates(&mut self, make: impl FnOnce(&Self) -> Vec<String>) -> Vec<String> {
        if self.suggestions_left == 0 {
            return Vec::new();
        }
        self.suggestions_left -= 1;
        make(self)
    }

    fn unknown(&mut self, n: &Ident, what: &str, candidates: &[&str]) {
        let mut d = Diagnostic::error(
            DiagnosticKind::UnknownName,
            n.span,
            format!("unknown name `{}`", n.name),
        )
        .with_expected(format!("expected {what}"));
        if let Some(close) = similar(n.name, candidates.iter().copied()) {
            d.help = Some(format!("did you mean `{close}`?"));
        }
        self.diags.push(d);
    }

    fn frequency(
        &mut self,
        e: &Expr,
        scope: &Scope,
        place: &dyn std::fmt::Display,
        allow_zero: bool,
    ) -> Option<f64> {
        let v = self.value_of(e, scope, Dim::Si(HERTZ), place)?;
        if v > 0.0 || (allow_zero && v == 0.0) {
            return Some(v);
        }
        let expected = if allow_zero {
            "expected a frequency of 0 Hz or more"
        } else {
            "expected a frequency above 0 Hz"
        };
        self.error(
            DiagnosticKind::BadValue,
            e.span,
            format!("{place} cannot be {} Hz", format_number(v)),
        )
        .expected = Some(expected.into());
        None
    }

    fn sweep(&mut self, s: &SweepStmt, scope: &Scope) -> Option<Sweep> {
        match s {
            SweepStmt::Log {
                start,
                stop,
                per_decade,
            } => {
                let f1 = self.frequency(start, scope, &"the start of a logarithmic sweep", false);
                let f2 = self.frequency(stop, scope, &"the end of the sweep", false);
                let n = self.value_of(per_decade, scope, Dim::Si(DIMENSIONLESS), &"`per_decade`");
                let (f1, f2, n) = (f1?, f2?, n?);
                if n.fract() != 0.0 || !(1.0..=100_000.0).contains(&n) {
                    self.error(
                        DiagnosticKind::BadValue,
                        per_decade.span,
                        "`per_decade` must be a whole number from 1 to 100000",
                    )
                    .expected = Some("expected a whole number of points per decade".into());
                    return None;
                }
                if f2 <= f1 {
                    self.error(
                        DiagnosticKind::BadValue,
                        stop.span,
                        "the sweep ends below its start",
                    )
                    .expected = Some(format!(
                        "expected a frequency above {} Hz",
                        format_number(f1)
                    ));
                    return None;
                }
                if (f2 / f1).log10() * n > MAX_SWEEP_POINTS {
                    self.error(
                        DiagnosticKind::BadValue,
                        per_decade.span,
                        "the sweep has too many points",
                    )
                    .expected = Some("expected at most 10 million points".into());
                    return None;
                }
                Some(Sweep::Log {
                    start: f1,
                    stop: f2,
                    per_decade: n as u32,
                })
            }
            SweepStmt::Linear { start, stop, step } => {
                let f1 = self.frequency(start, scope, &"the start of a linear sweep", true);
                let f2 = self.frequency(stop, scope, &"the end of the sweep", false);
                let df = self.frequency(step, scope, &"the step", false);
                let (f1, f2, df) = (f1?, f2?, df?);
                if f2 <= f1 {
                    self.error(
                        DiagnosticKind::BadValue,
                        stop.span,
                        "the sweep ends below its start",
                    )
                    .expected = Some(format!(
                        "expected a frequency above {} Hz",
                        format_number(f1)
                    ));
                    return None;
                }
                if (f2 - f1) / df > MAX_SWEEP_POINTS {
                    self.error(
                        DiagnosticKind::BadValue,
                        step.span,
                        "the sweep has too many points",
                    )
                    .expected = Some("expected at most 10 million points".into());
                    return None;
                }
                Some(Sweep::Linear {
                    start: f1,
                    stop: f2,
                    step: df,
                })
            }
            SweepStmt::List(points) => {
                let values: Vec<Option<f64>> = points
                    .iter()
                    .map(|p| self.frequency(p, scope, &"a sweep frequency", true))
                    .collect();
                values
                    .into_iter()
                    .collect::<Option<Vec<f64>>>()
                    .map(Sweep::List)
            }
        }
    }

    fn node_ref(&mut self, n: &Ident) -> Option<NodeId> {
        if let Some(&id) = self.node_index.get(n.name) {
            return Some(id);
        }
        let candidates = self.candidates(|e| e.nodes.clone());
        self.unknown(
            n,
            "a node",
            &candidates.iter().map(String::as_str).collect::<Vec<&str>>(),
        );
        None
    }

    fn part_ref(&mut self, n: &Ident) -> Option<PartId> {
        if let Some(&id) = self.part_index.get(n.name) {
            return Some(id);
        }
        if self.failed_parts.contains(n.name) {
            return None;
        }
        let names = self.candidates(|e| e.part_index.keys().cloned().collect());
        self.unknown(
            n,
            "a part",
            &names.iter().map(String::as_str).collect::<Vec<&str>>(),
        );
        None
    }

    fn probe(
        &mut self,
        p: &ProbeStmt,
        span: Span,
        circuit: &Circuit,
        scope: &Scope,
    ) -> Option<Probe> {
        let kind = match &p.what {
            ProbeWhat::Node(n) => ProbeKind::Node(self.node_ref(n)?),
            ProbeWhat::Ratio(a, b) => {
                let (a, b) = (self.node_ref(a), self.node_ref(b));
                ProbeKind::Ratio { num: a?, den: b? }
            }
            ProbeWhat::Difference(a, b) => {
                let (a, b) = (self.node_ref(a), self.node_ref(b));
                ProbeKind::Difference { pos: a?, neg: b? }
            }
            ProbeWhat::Current(part) => ProbeKind::Current(self.part_ref(part)?),
            ProbeWhat::Zin => ProbeKind::InputImpedance,
            ProbeWhat::Zout(n) => ProbeKind::OutputImpedance(self.node_ref(n)?),
        };
        let is_own_node = matches!(&p.what, ProbeWhat::Node(n) if n.name == p.name.name);
        if is_own_node {
            if circuit.probes.iter().any(|q| q.name == p.name.name) {
                self.error(
                    DiagnosticKind::Duplicate,
                    p.name.span,
                    format!("node `{}` is probed twice", p.name.name),
                )
                .expected = Some("one `probe` per node".into());
                return None;
            }
        } else if !self.declare(&p.name, NameKind::Probe) {
            return None;
        }
        let reference = match &p.reference {
            Some(e) => Some(self.frequency(e, scope, &"the reference frequency", false)?),
            None => None,
        };
        Some(Probe {
            name: p.name.name.to_string(),
            kind,
            reference,
            span,
        })
    }

    fn target(&mut self, t: &TargetSyntax, circuit: &Circuit, allow_part: bool) -> Option<Target> {
        match t {
            TargetSyntax::Current(p) => Some(Target::Current(self.part_ref(p)?)),
            TargetSyntax::Name(n) => {
                if let Some(i) = circuit.probes.iter().position(|p| p.name == n.name) {
                    return Some(Target::Probe(ProbeId(i as u32)));
                }
                if let Some(&id) = self.node_index.get(n.name) {
                    return Some(Target::Node(id));
                }
                if allow_part && let Some(&id) = self.part_index.get(n.name) {
                    return Some(Target::Part(id));
                }
                let candidates = self.candidates(|e| {
                    let mut all: Vec<String> =
                        circuit.probes.iter().map(|p| p.name.clone()).collect();
                    all.extend(e.nodes.iter().cloned());
                    if allow_part {
                        all.extend(e.part_index.keys().cloned());
                    }
                    all
                });
                let what = if allow_part {
                    "a node, a part or a probe"
                } else {
                    "a probe or a node"
                };
                self.unknown(
                    n,
                    what,
                    &candidates.iter().map(String::as_str).collect::<Vec<&str>>(),
                );
                None
            }
        }
    }

    fn expectation(
        &mut self,
        x: &ExpectStmt,
        span: Span,
        circuit: &Circuit,
        scope: &Scope,
    ) -> Option<Expectation> {
        let Some((template, n_freqs, unit)) = metric_kind(x.metric.name) else {
            let mut d = Diagnostic::error(
                DiagnosticKind::UnknownName,
                x.metric.span,
                format!("unknown metric `{}`", x.metric.name),
            )
            .with_expected("expected a metric such as `cutoff`, `gain` or `bias`");
            if let Some(close) = similar(x.metric.name, METRICS.iter().copied()) {
                d.help = Some(format!("did you mean `{close}`?"));
            }
            self.diags.push(d);
            return None;
        };
        let is_bias = matches!(template, MetricKind::Bias);
        let target = self.target(&x.target, circuit, is_bias)?;
        let unit = if is_bias && matches!(target, Target::Current(_)) {
            Unit::Ampere
        } else {
            unit
        };
        let mut freqs = Vec::new();
        let mut options = MetricOptions::default();
        let mut ok = true;
        for arg in &x.args {
            match arg {
                MetricArg::Value(e) => {
                    if freqs.len() >= n_freqs {
                        self.error(
                            DiagnosticKind::Syntax,
                            e.span,
                            format!("`{}` takes {n_freqs} frequency argument(s)", x.metric.name),
                        )
                        .expected = Some("one argument too many".into());
                        ok = false;
                        continue;
                    }
                    match self.frequency(e, scope, &"a metric's frequency", false) {
                        Some(f) => freqs.push(f),
                        None => ok = false,
                    }
                }
                MetricArg::Ref(e, kw) | MetricArg::Level(e, kw) => {
                    let is_ref = matches!(arg, MetricArg::Ref(..));
                    if n_freqs > 0 || is_bias {
                        self.error(
                            DiagnosticKind::Syntax,
                            *kw,
                            format!("`{}` takes no `ref` or `level`", x.metric.name),
                        )
                        .expected = Some(
                            "`ref` and `level` go with `cutoff` and the other passband metrics"
                                .into(),
                        );
                        ok = false;
                    } else if is_ref {
                        options.reference =
                            self.frequency(e, scope, &"the reference frequency", false);
                        ok &= options.reference.is_some();
                    } else {
                        options.level_db = self.bound(e, scope, Unit::Decibel, &"the level");
                        ok &= options.level_db.is_some();
                    }
                }
            }
        }
        if ok && freqs.len() < n_freqs {
            self.error(
                DiagnosticKind::Syntax,
                x.metric.span,
                format!("`{}` needs {n_freqs} frequency argument(s)", x.metric.name),
            )
            .expected = Some(match n_freqs {
                1 => format!("expected `{}(target, frequency)`", x.metric.name),
                _ => format!("expected `{}(target, f1, f2)`", x.metric.name),
            });
            ok = false;
        }
        let comparison = self.comparison(&x.comparison, unit, scope);
        if !ok {
            return None;
        }
        let kind = match template {
            MetricKind::Gain { .. } => MetricKind::Gain { freq: freqs[0] },
            MetricKind::Phase { .. } => MetricKind::Phase { freq: freqs[0] },
            MetricKind::GroupDelay { .. } => MetricKind::GroupDelay { freq: freqs[0] },
            MetricKind::Impedance { .. } => MetricKind::Impedance { freq: freqs[0] },
            MetricKind::Slope { .. } => MetricKind::Slope {
                f1: freqs[0],
                f2: freqs[1],
            },
            other => other,
        };
        Some(Expectation {
            metric: Metric {
                kind,
                target,
                options,
            },
            comparison: comparison?,
            unit,
            text: String::new(),
            span,
        })
    }

    /// A comparison bound converted to the metric's unit; a bare number is refused
    /// unless the unit is a plain number.
    fn bound(
        &mut self,
        e: &Expr,
        scope: &Scope,
        unit: Unit,
        place: &dyn std::fmt::Display,
    ) -> Option<f64> {
        let q = self.eval(e, scope)?;
        let wanted = unit_dim(unit);
        if unit == Unit::Dimensionless {
            if q.dim.is_plain() {
                return Some(q.value);
            }
        } else if q.dim == Dim::Unknown {
            let example = match unit {
                Unit::Decibel => "`20 dB` (a bare number could be dB or a ratio)",
                Unit::Hertz => "`1 kHz`",
                Unit::Degree => "`45 deg`",
                Unit::DecibelPerDecade => "`-20 dB/dec` or `-6 dB/oct`",
                Unit::Ohm => "`10 kΩ`",
                Unit::Volt => "`5 mV`",
                Unit::Ampere => "`1 mA`",
                _ => "`1 ms`",
            };
            self.error(
                DiagnosticKind::Dimension,
                e.span,
                format!("{place} needs a unit: a bare number is ambiguous here"),
            )
            .with_expected_note(format!("expected {}", wanted.describe()), String::new())
            .help = Some(format!("write the unit, e.g. {example}"));
            if let Some(d) = self.diags.last_mut() {
                d.notes.clear();
            }
            return None;
        } else if q.dim.fits(wanted) {
            return Some(q.value);
        }
        self.error(
            DiagnosticKind::Dimension,
            e.span,
            format!(
                "{place} must be {}, but this is {}",
                wanted.describe(),
                q.dim.describe()
            ),
        )
        .expected = Some(format!("expected {}, found {}", wanted.describe(), q.dim));
        None
    }

    fn comparison(&mut self, c: &CmpSyntax, unit: Unit, scope: &Scope) -> Option<Comparison> {
        let place = "the bound";
        Some(match c {
            CmpSyntax::Less(e) => Comparison::Less(self.bound(e, scope, unit, &place)?),
            CmpSyntax::LessEqual(e) => Comparison::LessEqual(self.bound(e, scope, unit, &place)?),
            CmpSyntax::Greater(e) => Comparison::Greater(self.bound(e, scope, unit, &place)?),
            CmpSyntax::GreaterEqual(e) => {
                Comparison::GreaterEqual(self.bound(e, scope, unit, &place)?)
            }
            CmpSyntax::Within(lo, hi) => {
                let (low, high) = (
                    self.bound(lo, scope, unit, &"the lower bound"),
                    self.bound(hi, scope, unit, &"the upper bound"),
                );
                let (low, high) = (low?, high?);
                if low > high {
                    self.error(
                        DiagnosticKind::BadValue,
                        lo.span.join(hi.span),
                        "the range is empty",
                    )
                    .expected =
                        Some("expected `within low .. high` with low not above high".into());
                    return None;
                }
                Comparison::Within { low, high }
            }
            CmpSyntax::Equal(e, tol) => {
                let value = self.bound(e, scope, unit, &"the value");
                let deviation = match tol {
                    Some(t) => self.deviation(t, scope, unit).map(|d| match d {
                        // A bare tolerance is in the value's unit as written: dB/oct
                        // converts like the value did.
                        Deviation::Absolute(v) if written_per_octave(e) && bare(t) => {
                            Deviation::Absolute(v * std::f64::consts::LOG2_10)
                        }
                        other => other,
                    }),
                    None if self.has_fit => Some(Deviation::Relative(0.0)),
                    None => {
                        self.error(DiagnosticKind::Syntax, e.span, "`=` needs a tolerance")
                            .with_expected_note("expected `= value ± tolerance`", String::new());
                        if let Some(d) = self.diags.last_mut() {
                            d.notes.clear();
                            d.help = Some("add `± 1 %` or an absolute tolerance; a bare `= x` is only a fit target, in a file with a `?` part".into());
                        }
                        None
                    }
                };
                Comparison::Equal {
                    value: value?,
                    deviation: deviation?,
                }
            }
        })
    }

    fn deviation(&mut self, t: &Expr, scope: &Scope, unit: Unit) -> Option<Deviation> {
        let q = self.eval(t, scope)?;
        let d = match q.dim {
            Dim::Percent => Deviation::Relative(q.value),
            Dim::Unknown => Deviation::Absolute(q.value),
            dim if dim.fits(unit_dim(unit)) => Deviation::Absolute(q.value),
            dim => {
                self.error(
                    DiagnosticKind::Dimension,
                    t.span,
                    "the tolerance does not fit the value",
                )
                .expected = Some(format!(
                    "expected % or {}, found {dim}",
                    unit_dim(unit).describe()
                ));
                return None;
            }
        };
        let amount = match d {
            Deviation::Relative(v) | Deviation::Absolute(v) => v,
        };
        if amount < 0.0 {
            self.error(
                DiagnosticKind::BadValue,
                t.span,
                "a tolerance cannot be negative",
            )
            .expected = Some("expected a tolerance of zero or more".into());
            return None;
        }
        Some(d)
    }

    // ------------------------------------------------------------ checks

    fn graph_checks(&mut self, parts: &[Part]) {
        let nodes = std::mem::take(&mut self.nodes);
        let n = nodes.len();
        let mut parent: Vec<u32> = (0..n as u32).collect();
        for part in parts {
            for (a, b) in conductive_pairs(&part.kind) {
                union(&mut parent, a.0, b.0);
            }
        }
        let ground = find(&mut parent, 0);
        let mut groups: HashMap<u32, Vec<usize>> = HashMap::new();
        for node in 1..n {
            let root = find(&mut parent, node as u32);
            if root != ground {
                groups.entry(root).or_default().push(node);
            }
        }
        let mut groups: Vec<Vec<usize>> = groups.into_values().collect();
        groups.sort_by_key(|g| g[0]);
        for group in groups {
            let names: Vec<&str> = group.iter().take(6).map(|&i| nodes[i].as_str()).collect();
            let message = if group.len() == 1 {
                format!("node `{}` has no path to `gnd` through any part", names[0])
            } else {
                format!(
                    "nodes {} have no path to `gnd` through any part",
                    names
                        .iter()
                        .map(|s| format!("`{s}`"))
                        .collect::<Vec<_>>()
                        .join(", ")
                )
            };
            self.error(
                DiagnosticKind::NoPathToGround,
                self.node_span[group[0]],
                message,
            )
            .expected = Some(
                "connect this part of the circuit to `gnd` (a resistor, capacitor or source)"
                    .into(),
            );
        }
        let mut suggestions = 0;
        for node in 1..n {
            if self.node_connections[node] != 1 {
                continue;
            }
            let name = &nodes[node];
            let mut d = Diagnostic::warning(
                DiagnosticKind::SingleConnection,
                self.node_span[node],
                format!("node `{name}` has only one connection"),
            )
            .with_expected("nothing else connects here");
            if suggestions < 50 {
                suggestions += 1;
                let others = nodes
                    .iter()
                    .enumerate()
                    .filter(|&(i, _)| i != node)
                    .map(|(_, s)| s.as_str());
                if let Some(close) = similar(name, others) {
                    d.help = Some(format!("did you mean `{close}`?"));
                }
            }
            self.diags.push(d);
        }
        self.nodes = nodes;
    }

    fn unused_lets(&mut self) {
        for name in &self.let_order {
            let binding = &self.lets[name];
            if !binding.used {
                self.diags.push(
                    Diagnostic::warning(
                        DiagnosticKind::UnusedLet,
                        binding.span,
                        format!("`let {name}` is never used"),
                    )
                    .with_expected("defined here"),
                );
            }
        }
    }
}

trait WithNote {
    fn with_expected_note(&mut self, expected: impl Into<String>, note: String) -> &mut Self;
}

impl WithNote for Diagnostic {
    fn with_expected_note(&mut self, expected: impl Into<String>, note: String) -> &mut Self {
        self.expected = Some(expected.into());
        self.notes.push(note);
        self
    }
}

/// Applies `f` to every node of a part.
fn for_each_node(kind: &mut PartKind, mut f: impl FnMut(&mut NodeId)) {
    match kind {
        PartKind::Resistor { a, b, .. }
        | PartKind::Capacitor { a, b, .. }
        | PartKind::Inductor { a, b, .. } => {
            f(a);
            f(b);
        }
        PartKind::VoltageSource { pos, neg, .. } => {
            f(pos);
            f(neg);
        }
        PartKind::CurrentSource { from, to, .. } => {
            f(from);
            f(to);
        }
        PartKind::Vcvs {
            out_pos,
            out_neg,
            in_pos,
            in_neg,
            ..
        }
        | PartKind::Vccs {
            out_pos,
            out_neg,
            in_pos,
            in_neg,
            ..
        } => {
            f(out_pos);
            f(out_neg);
            f(in_pos);
            f(in_neg);
        }
        PartKind::OpAmp {
            out,
            in_pos,
            in_neg,
            ..
        } => {
            f(out);
            f(in_pos);
            f(in_neg);
        }
    }
}

/// The node pairs a part connects for the "path to gnd" check (capacitors count).
fn conductive_pairs(kind: &PartKind) -> Vec<(NodeId, NodeId)> {
    match *kind {
        PartKind::Resistor { a, b, .. }
        | PartKind::Capacitor { a, b, .. }
        | PartKind::Inductor { a, b, .. } => vec![(a, b)],
        PartKind::VoltageSource { pos, neg, .. } => vec![(pos, neg)],
        PartKind::CurrentSource { from, to, .. } => vec![(from, to)],
        PartKind::Vcvs {
            out_pos, out_neg, ..
        }
        | PartKind::Vccs {
            out_pos, out_neg, ..
        } => vec![(out_pos, out_neg)],
        PartKind::OpAmp { out, .. } => vec![(out, NodeId::GND)],
    }
}

fn find(parent: &mut [u32], mut x: u32) -> u32 {
    while parent[x as usize] != x {
        let grand = parent[parent[x as usize] as usize];
        parent[x as usize] = grand;
        x = grand;
    }
    x
}

fn union(parent: &mut [u32], a: u32, b: u32) {
    let (ra, rb) = (find(parent, a), find(parent, b));
    if ra != rb {
        let (lo, hi) = (ra.min(rb), ra.max(rb));
        parent[hi as usize] = lo;
    }
}

/// The search range of a bare `?` by part kind.
pub(crate) fn default_fit_range(k: PartKeyword) -> (f64, f64) {
    match k {
        PartKeyword::Capacitor => (1e-15, 1.0),
        PartKeyword::Inductor => (1e-9, 1e3),
        _ => (1.0, 1e9),
    }
}

/// The metric names of the language.
pub(crate) const METRICS: &[&str] = &[
    "cutoff",
    "cutoff_low",
    "cutoff_high",
    "bandwidth",
    "passband_gain",
    "resonance",
    "q",
    "peak_gain",
    "peak_freq",
    "peaking",
    "notch_freq",
    "notch_depth",
    "gain",
    "phase",
    "group_delay",
    "slope",
    "impedance",
    "bias",
];

/// A metric's kind (frequencies to be filled in), how many frequency arguments it takes
/// and the unit of its value.
pub(crate) fn metric_kind(name: &str) -> Option<(MetricKind, usize, Unit)> {
    Some(match name {
        "cutoff" => (MetricKind::Cutoff, 0, Unit::Hertz),
        "cutoff_low" => (MetricKind::CutoffLow, 0, Unit::Hertz),
        "cutoff_high" => (MetricKind::CutoffHigh, 0, Unit::Hertz),
        "bandwidth" => (MetricKind::Bandwidth, 0, Unit::Hertz),
        "passband_gain" => (MetricKind::PassbandGain, 0, Unit::Decibel),
        "resonance" => (MetricKind::Resonance, 0, Unit::Hertz),
        "q" => (MetricKind::Q, 0, Unit::Dimensionless),
        "peak_gain" => (MetricKind::PeakGain, 0, Unit::Decibel),
        "peak_freq" => (MetricKind::PeakFreq, 0, Unit::Hertz),
        "peaking" => (MetricKind::Peaking, 0, Unit::Decibel),
        "notch_freq" => (MetricKind::NotchFreq, 0, Unit::Hertz),
        "notch_depth" => (MetricKind::NotchDepth, 0, Unit::Decibel),
        "gain" => (MetricKind::Gain { freq: 0.0 }, 1, Unit::Decibel),
        "phase" => (MetricKind::Phase { freq: 0.0 }, 1, Unit::Degree),
        "group_delay" => (MetricKind::GroupDelay { freq: 0.0 }, 1, Unit::Second),
        "slope" => (
            MetricKind::Slope { f1: 0.0, f2: 0.0 },
            2,
            Unit::DecibelPerDecade,
        ),
        "impedance" => (MetricKind::Impedance { freq: 0.0 }, 1, Unit::Ohm),
        "bias" => (MetricKind::Bias, 0, Unit::Volt),
        _ => return None,
    })
}

/// The dimension a comparison unit stands for.
pub(crate) fn unit_dim(unit: Unit) -> Dim {
    match unit {
        Unit::Hertz => Dim::Si(HERTZ),
        Unit::Decibel => Dim::Decibel,
        Unit::Degree => Dim::Degree,
        Unit::DecibelPerDecade => Dim::DbPerDecade,
        Unit::Ohm => Dim::Si(OHM),
        Unit::Volt => Dim::Si(VOLT),
        Unit::Ampere => Dim::Si(AMPERE),
        Unit::Second => Dim::Si(SECOND),
        Unit::Dimensionless => Dim::Si(DIMENSIONLESS),
    }
}

fn article(word: &str) -> &'static str {
    if word.starts_with(['a', 'e', 'i', 'o', 'u']) {
        "an"
    } else {
        "a"
    }
}

fn written_per_octave(e: &Expr) -> bool {
    matches!(&e.kind, ExprKind::Number(l) if l.unit == Some(crate::units::UnitSym::DbPerOctave))
}

fn bare(e: &Expr) -> bool {
    matches!(&e.kind, ExprKind::Number(l) if l.unit.is_none())
}

fn describe_quantity(q: Quantity) -> String {
    match q.dim {
        Dim::Unknown | Dim::Si(DIMENSIONLESS) => format_number(q.value),
        Dim::Percent => format!("{} %", format_number(q.value * 100.0)),
        dim => format!("{} {dim}", format_number(q.value)),
    }
}

/// The error for an unknown name where a value is expected, with the refusals for
/// `R47`-style codes and for not-a-number words.
fn unknown_value_name<'n>(
    n: &str,
    span: Span,
    candidates: impl Iterator<Item = &'n str>,
) -> Diagnostic {
    let mut d = Diagnostic::error(
        DiagnosticKind::UnknownName,
        span,
        format!("unknown name `{n}`"),
    )
    .with_expected("expected a number or a name defined by `let`");
    let mut chars = n.chars();
    let first = chars.next().unwrap_or(' ');
    let rest = chars.as_str();
    if (first == 'R' || crate::units::prefix_exponent(first).is_some())
        && !rest.is_empty()
        && rest.bytes().all(|b| b.is_ascii_digit())
    {
        d.kind = DiagnosticKind::Refusal;
        d.message = format!("`{n}` is a name, not a value code");
        d.help = Some(format!("a value code starts with a digit: write `0{n}`"));
    } else if ["nan", "inf", "infinity"].contains(&n.to_ascii_lowercase().as_str()) {
        d.help = Some("not-a-number and infinity are not values".into());
    } else if n.to_ascii_lowercase().ends_with("meg") || n.to_ascii_lowercase().starts_with("meg") {
        d.help = Some("mega is the SI prefix `M`, glued to a number (`1M`)".into());
    } else if let Some(close) = similar(n, candidates) {
        d.help = Some(format!("did you mean `{close}`?"));
    }
    d
}

/// A name among `candidates` close to `name` (same letters ignoring case, or at most
/// two edits away for names of four or more characters, one for shorter ones).
pub(crate) fn similar<'c>(name: &str, candidates: impl Iterator<Item = &'c str>) -> Option<String> {
    let limit = if name.chars().count() >= 4 { 2 } else { 1 };
    let mut best: Option<(usize, &str)> = None;
    for c in candidates {
        if c == name {
            continue;
        }
        let d = if c.eq_ignore_ascii_case(name) {
            0
        } else {
            edit_distance(name, c, limit)
        };
        if d <= limit && best.is_none_or(|(bd, bc)| d < bd || (d == bd && c < bc)) {
            best = Some((d, c));
        }
    }
    best.map(|(_, c)| c.to_string())
}

/// Edit distance with adjacent transpositions (optimal string alignment), giving up
/// (returning `limit + 1`) once every path exceeds `limit`.
fn edit_distance(a: &str, b: &str, limit: usize) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    if a.len().abs_diff(b.len()) > limit {
        return limit + 1;
    }
    let width = b.len() + 1;
    let mut rows = vec![vec![0usize; width]; a.len() + 1];
    for (j, cell) in rows[0].iter_mut().enumerate() {
        *cell = j;
    }
    for i in 1..=a.len() {
        rows[i][0] = i;
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            let mut d = (rows[i - 1][j - 1] + cost)
                .min(rows[i - 1][j] + 1)
                .min(rows[i][j - 1] + 1);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                d = d.min(rows[i - 2][j - 2] + 1);
            }
            rows[i][j] = d;
        }
        if rows[i].iter().min().copied().unwrap_or(0) > limit {
            return limit + 1;
        }
    }
    rows[a.len()][b.len()]
}
