//! The grammar: `nom` parsers from text to the syntax tree, one line at a time.
//!
//! Every line is parsed on its own (`complete` parsers over the `&str` of that
//! line), so an error on one line never hides the next; `block … end` is put
//! together afterwards from the line statements. Once a statement keyword is read the
//! rest of the line is under `cut`, so errors land on the real token rather than on
//! the keyword. Nesting is bounded by [`MAX_DEPTH`].

use crate::circuit::Span;
use crate::diagnostic::{Diagnostic, DiagnosticKind};
use crate::syntax::{
    BinOp, BlockDef, CmpSyntax, ExpectStmt, Expr, ExprKind, Func, Ident, MetricArg, PartKeyword,
    PartOption, PartStmt, PartValue, ProbeStmt, ProbeWhat, Stmt, StmtKind, SweepStmt, TargetSyntax,
    UseStmt,
};
use crate::units::{Literal, LiteralError, UnitSym, prefix_exponent};
use nom::bytes::complete::tag;
use nom::character::complete::digit1;
use nom::combinator::cut;
use nom::error::{ErrorKind, ParseError, context};
use nom::{IResult, Input, Parser};
use std::cell::Cell;

/// The deepest nesting of parentheses, signs and powers an expression may have.
pub const MAX_DEPTH: u32 = 64;
/// The longest line accepted, in bytes.
pub const MAX_LINE: usize = 64 * 1024;

type In<'a> = &'a str;

thread_local! {
    /// The address of the text being parsed, so a suffix's byte offset is a pointer
    /// difference. (`nom_locate` spans did this too, but counting lines on every
    /// token cost more than the rest of the parser.)
    static BASE: Cell<usize> = const { Cell::new(0) };
}

/// Byte offsets and fragments of the input, in the names `nom_locate` uses.
trait Located<'a> {
    fn location_offset(&self) -> usize;
    fn fragment(&self) -> &&'a str;
}

impl<'a> Located<'a> for &'a str {
    fn location_offset(&self) -> usize {
        (self.as_ptr() as usize).wrapping_sub(BASE.with(Cell::get))
    }

    fn fragment(&self) -> &&'a str {
        self
    }
}

/// Runs `f` with offsets measured from the start of `text`.
fn with_base<T>(text: &str, f: impl FnOnce() -> T) -> T {
    let previous = BASE.with(|b| b.replace(text.as_ptr() as usize));
    let out = f();
    BASE.with(|b| b.set(previous));
    out
}
type PResult<'a, T> = IResult<In<'a>, T, PError>;

/// The parser's error: where, what was expected, and optionally a full custom message.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct PError {
    offset: usize,
    expected: &'static str,
    context: Option<&'static str>,
    custom: Option<Box<Custom>>,
}

/// A custom error with its own message (refusals, overflow, depth).
#[derive(Debug, Clone, PartialEq)]
struct Custom {
    kind: DiagnosticKind,
    len: usize,
    message: String,
    label: Option<String>,
    help: Option<String>,
}

impl ParseError<In<'_>> for PError {
    fn from_error_kind(input: In<'_>, _kind: ErrorKind) -> Self {
        PError {
            offset: input.location_offset(),
            expected: "something else",
            context: None,
            custom: None,
        }
    }

    fn append(_input: In<'_>, _kind: ErrorKind, other: Self) -> Self {
        other
    }

    fn or(self, other: Self) -> Self {
        if other.offset >= self.offset {
            other
        } else {
            self
        }
    }
}

impl nom::error::ContextError<In<'_>> for PError {
    fn add_context(_input: In<'_>, ctx: &'static str, mut other: Self) -> Self {
        if other.context.is_none() {
            other.context = Some(ctx);
        }
        other
    }
}

impl PError {
    fn at(i: &In<'_>, expected: &'static str) -> Self {
        PError {
            offset: i.location_offset(),
            expected,
            context: None,
            custom: None,
        }
    }

    fn custom(offset: usize, len: usize, kind: DiagnosticKind, message: String) -> Self {
        PError {
            offset,
            expected: "",
            context: None,
            custom: Some(Box::new(Custom {
                kind,
                len,
                message,
                label: None,
                help: None,
            })),
        }
    }

    fn label(mut self, label: impl Into<String>) -> Self {
        if let Some(c) = &mut self.custom {
            c.label = Some(label.into());
        }
        self
    }

    fn help(mut self, help: impl Into<String>) -> Self {
        if let Some(c) = &mut self.custom {
            c.help = Some(help.into());
        }
        self
    }

    /// Turns the error into a diagnostic; `line` is the text of the line it is on and
    /// `line_start` that line's offset.
    fn into_diagnostic(self, line: &str, line_start: usize) -> Diagnostic {
        let local = self.offset.saturating_sub(line_start).min(line.len());
        if let Some(c) = self.custom {
            let mut d = Diagnostic::error(
                c.kind,
                Span::new(self.offset, self.offset + c.len.max(1)),
                c.message,
            );
            d.expected = c.label;
            d.help = c.help;
            return d;
        }
        let found = found_token(&line[local..]);
        let len = if found.is_empty() { 0 } else { found.len() };
        let found_text = if found.is_empty() {
            "the end of the line".to_string()
        } else {
            format!("`{found}`")
        };
        let message = match self.context {
            Some(ctx) => format!("in {ctx}: expected {}, found {found_text}", self.expected),
            None => format!("expected {}, found {found_text}", self.expected),
        };
        Diagnostic::error(
            DiagnosticKind::Syntax,
            Span::new(self.offset, self.offset + len),
            message,
        )
        .with_expected(format!("expected {}", self.expected))
    }
}

/// The token at the start of `text`: a word, a number or one character.
fn found_token(text: &str) -> &str {
    let word_len = text
        .char_indices()
        .find(|&(_, c)| !(is_ident_char(c) || c == '.'))
        .map_or(text.len(), |(i, _)| i);
    if word_len > 0 {
        return &text[..word_len.min(40)];
    }
    text.chars().next().map_or("", |c| &text[..c.len_utf8()])
}

fn err<T>(i: &In<'_>, expected: &'static str) -> PResult<'static, T> {
    Err(nom::Err::Error(PError::at(i, expected)))
}

fn fail<T>(e: PError) -> Result<T, nom::Err<PError>> {
    Err(nom::Err::Failure(e))
}

/// Turns a recoverable error into a failure (the nom `cut`).
fn cut_err<T>(r: Result<T, nom::Err<PError>>) -> Result<T, nom::Err<PError>> {
    match r {
        Err(nom::Err::Error(e)) => Err(nom::Err::Failure(e)),
        other => other,
    }
}

fn span_of(start: &In<'_>, end: &In<'_>) -> Span {
    Span::new(start.location_offset(), end.location_offset())
}

fn is_ident_char(c: char) -> bool {
    c.is_ascii_alphanumeric() || c == '_'
}

/// Whether a byte may start a name, `[A-Za-z_]` (name characters are all ASCII, so
/// scanning bytes finds the same ends as scanning characters).
fn is_ident_start_byte(b: u8) -> bool {
    b.is_ascii_alphabetic() || b == b'_'
}

/// The byte form of [`is_ident_char`].
fn is_ident_byte(b: u8) -> bool {
    b.is_ascii_alphanumeric() || b == b'_'
}

/// The length of the run of name characters at the start of `text`.
fn ident_len(text: &str) -> usize {
    text.bytes().take_while(|&b| is_ident_byte(b)).count()
}

/// Blanks (spaces and tabs) between tokens.
#[allow(clippy::unnecessary_wraps)] // a parser like the others, used with `?`
fn ws(i: In<'_>) -> PResult<'_, ()> {
    let n = i.bytes().take_while(|&b| b == b' ' || b == b'\t').count();
    Ok((&i[n..], ()))
}

/// A symbol after optional blanks: grammar terminals such as `(`, `,`, `=`, `..`.
fn sym<'a>(s: &'static str, expected: &'static str) -> impl Fn(In<'a>) -> PResult<'a, ()> {
    move |i: In<'a>| {
        let (i, ()) = ws(i)?;
        match i.strip_prefix(s) {
            Some(rest) => Ok((rest, ())),
            None => err(&i, expected),
        }
    }
}

fn peek_sym(i: &In<'_>, s: &str) -> bool {
    i.fragment().trim_start_matches([' ', '\t']).starts_with(s)
}

/// A plain word `[A-Za-z_][A-Za-z0-9_]*` (keywords, metric and block names).
fn word(i: In<'_>) -> PResult<'_, Ident<'_>> {
    let (i, ()) = ws(i)?;
    let start = i;
    if !i
        .as_bytes()
        .first()
        .is_some_and(|&b| is_ident_start_byte(b))
    {
        return err(&i, "a name");
    }
    let (text, i) = i.split_at(ident_len(i));
    Ok((
        i,
        Ident {
            name: text,
            span: span_of(&start, &i),
        },
    ))
}

/// A keyword: the word `kw`, not followed by a name character.
fn keyword<'a>(kw: &'static str) -> impl Fn(In<'a>) -> PResult<'a, Span> {
    move |i: In<'a>| {
        let (j, ()) = ws(i)?;
        let frag = j.fragment();
        if frag.starts_with(kw) && !frag[kw.len()..].chars().next().is_some_and(is_ident_char) {
            let (rest, _) = j.take_split(kw.len());
            return Ok((rest, span_of(&j, &rest)));
        }
        err(&j, "a keyword")
    }
}

/// A name, possibly qualified with dots (`R1`, `S1.C`, `LAD.s2.R`).
fn name(i: In<'_>) -> PResult<'_, Ident<'_>> {
    let (i, ()) = ws(i)?;
    let start = i;
    let mut end = 0;
    let frag = *i.fragment();
    let bytes = frag.as_bytes();
    loop {
        if !bytes.get(end).is_some_and(|&b| is_ident_start_byte(b)) {
            if end == 0 {
                return err(&i, "a name");
            }
            break;
        }
        end += ident_len(&frag[end..]);
        if bytes.get(end) == Some(&b'.')
            && bytes.get(end + 1).is_some_and(|&b| is_ident_start_byte(b))
        {
            end += 1;
        } else {
            break;
        }
    }
    let (rest, text) = i.take_split(end);
    Ok((
        rest,
        Ident {
            name: text,
            span: span_of(&start, &rest),
        },
    ))
}

/// A node name in a connection list, with the refusals for `GND` and `0`.
fn node(i: In<'_>) -> PResult<'_, Ident<'_>> {
    let (i, ()) = ws(i)?;
    if i.fragment().starts_with(|c: char| c.is_ascii_digit()) {
        let len = i
            .fragment()
            .find(|c: char| !c.is_ascii_alphanumeric())
            .unwrap_or(i.fragment().len());
        let e = if &i.fragment()[..len] == "0" {
            PError::custom(
                i.location_offset(),
                1,
                DiagnosticKind::Refusal,
                "the digit `0` is not a node: the reference node is `gnd`".into(),
            )
            .label("write `gnd` here")
        } else {
            PError::custom(
                i.location_offset(),
                len,
                DiagnosticKind::Syntax,
                "a node name must start with a letter or `_`".into(),
            )
            .label("expected a node name")
        };
        return fail(e);
    }
    let (rest, id) = name(i)?;
    if id.name != "gnd" && id.name.eq_ignore_ascii_case("gnd") {
        return fail(
            PError::custom(
                id.span.start,
                id.name.len(),
                DiagnosticKind::Refusal,
                format!(
                    "`{}` is not the reference node: ground is `gnd`, in lower case",
                    id.name
                ),
            )
            .label("write `gnd`"),
        );
    }
    Ok((rest, id))
}

/// `( node, node, … )`: a connection list of at least one node.
fn node_list(i: In<'_>) -> PResult<'_, (Vec<Ident<'_>>, Span)> {
    let (i, ()) = ws(i)?;
    let start = i;
    let (i, ()) = sym("(", "`(` and the nodes")(i)?;
    let (mut i, first) = cut_err(node(i))?;
    // Two nodes is the usual list: one exact allocation, no growth.
    let mut nodes = Vec::with_capacity(2);
    nodes.push(first);
    loop {
        if let Ok((j, ())) = sym(",", "")(i) {
            let (j, n) = cut_err(node(j))?;
            nodes.push(n);
            i = j;
        } else {
            let (j, ()) = cut_err(sym(")", "`,` or `)`")(i))?;
            return Ok((j, (nodes, span_of(&start, &j))));
        }
    }
}

// ---------------------------------------------------------------- numbers

/// A number literal: digits, fraction, exponent, an IEC 60062 value code (`4k7`,
/// `0R47`), an optional SI prefix and an optional unit, glued or after a blank.
fn literal(i: In<'_>) -> PResult<'_, (Literal<'_>, Span)> {
    let start = i;
    let Ok((i, int)) = digit1::<_, PError>(i) else {
        return err(&i, "a number");
    };
    let mut lit = Literal {
        negative: false,
        int,
        frac: "",
        exponent: 0,
        prefix: None,
        unit: None,
        cached: None,
    };
    let frag = *i.fragment();
    let mut chars = frag.chars();
    let first = chars.next();
    let second_is_digit = chars.next().is_some_and(|c| c.is_ascii_digit());
    // IEC 60062 value code: the letter stands for the decimal point.
    if let Some(c) =
        first.filter(|&c| (c == 'R' || prefix_exponent(c).is_some()) && second_is_digit)
    {
        let (i, _) = i.take_split(c.len_utf8());
        let (i, frac) = digit1::<_, PError>(i)?;
        lit.frac = frac;
        lit.exponent = -(frac.len() as i64);
        if c == 'R' {
            lit.unit = Some(UnitSym::Ohm);
        } else {
            lit.prefix = prefix_exponent(c);
        }
        let glued = unit_word(i.fragment());
        let i = match UnitSym::from_word(glued) {
            Some(u) if lit.unit.is_none() && u.takes_prefix() => {
                lit.unit = Some(u);
                i.take_from(glued.len())
            }
            _ if glued.is_empty() => i,
            _ => return fail(bad_suffix(&i, &start, glued)),
        };
        return finish_literal(start, i, lit);
    }
    if first == Some('K') && second_is_digit {
        let code: String = frag
            .chars()
            .take_while(char::is_ascii_alphanumeric)
            .collect();
        return fail(
            PError::custom(
                start.location_offset(),
                int.fragment().len() + code.len(),
                DiagnosticKind::Refusal,
                "`K` is not an SI prefix: kilo is a lower-case `k`".into(),
            )
            .label(format!(
                "write `{}{}`",
                int.fragment(),
                code.replacen('K', "k", 1)
            )),
        );
    }
    // A trailing `R` with no digits after it is the code for whole ohms (`47R`).
    if first == Some('R') && !frag[1..].chars().next().is_some_and(is_ident_char) {
        let (i, _) = i.take_split(1);
        lit.unit = Some(UnitSym::Ohm);
        return finish_literal(start, i, lit);
    }
    let mut i = i;
    if let Ok((j, frac)) = (tag::<_, _, PError>("."), digit1::<_, PError>).parse(i) {
        lit.frac = frac.1;
        lit.exponent = -(frac.1.len() as i64);
        i = j;
    }
    if let Some((j, e)) = exponent(i) {
        lit.exponent = lit.exponent.saturating_add(e);
        i = j;
    }
    let (i, ()) = unit_suffix(i, &start, &mut lit)?;
    finish_literal(start, i, lit)
}

/// An exponent `e-9`, `E+3`; `None` (nothing consumed) when absent.
fn exponent(i: In<'_>) -> Option<(In<'_>, i64)> {
    let frag = i.fragment();
    let rest = frag.strip_prefix(['e', 'E'])?;
    let (negative, sign_len, rest) = if let Some(r) = rest.strip_prefix('-') {
        (true, 1, r)
    } else if let Some(r) = rest.strip_prefix('\u{2212}') {
        (true, 3, r)
    } else if let Some(r) = rest.strip_prefix('+') {
        (false, 1, r)
    } else {
        (false, 0, rest)
    };
    let n_digits = rest.bytes().take_while(u8::is_ascii_digit).count();
    if n_digits == 0 {
        return None;
    }
    let digits = &rest[..n_digits];
    let value: i64 = digits.parse().unwrap_or(i64::MAX / 4);
    let (j, _) = i.take_split(1 + sign_len + n_digits);
    Some((j, if negative { -value } else { value }))
}

fn finish_literal<'a>(
    start: In<'a>,
    i: In<'a>,
    mut lit: Literal<'a>,
) -> PResult<'a, (Literal<'a>, Span)> {
    let span = span_of(&start, &i);
    match lit.cache() {
        Ok(_) => Ok((i, (lit, span))),
        Err(e) => {
            let what = match e {
                LiteralError::Overflow => "too large",
                LiteralError::Underflow => "too small (it would round to zero)",
            };
            fail(
                PError::custom(
                    span.start,
                    span.end - span.start,
                    DiagnosticKind::NumberRange,
                    format!("the number is {what} for a 64-bit float"),
                )
                .label("out of range (about 1e-308 to 1e308)"),
            )
        }
    }
}

/// Characters that may form a unit word glued to a number.
fn is_unit_char(c: char) -> bool {
    c.is_alphanumeric() || c == '_' || c == '%' || c == '°'
}

/// The unit word at the start of `frag`, including `/dec` or `/oct` after `dB`.
fn unit_word(frag: &str) -> &str {
    let mut len = frag.find(|c| !is_unit_char(c)).unwrap_or(frag.len());
    if frag[..len].ends_with("dB")
        && (frag[len..].starts_with("/dec") || frag[len..].starts_with("/oct"))
    {
        len += 4;
    }
    &frag[..len]
}

/// What a unit word means: `(prefix exponent, unit)`.
fn interpret_unit(word: &str) -> Option<(Option<i64>, Option<UnitSym>)> {
    if let Some(u) = UnitSym::from_word(word) {
        return Some((None, Some(u)));
    }
    let c = word.chars().next()?;
    let prefix = prefix_exponent(c)?;
    let rest = &word[c.len_utf8()..];
    if rest.is_empty() {
        return Some((Some(prefix), None));
    }
    let u = UnitSym::from_word(rest)?;
    Some((Some(prefix), Some(u)))
}

/// The prefix and unit after a number, glued (`10kΩ`, `10k`) or after a blank (`10 kΩ`).
fn unit_suffix<'a>(i: In<'a>, start: &In<'a>, lit: &mut Literal) -> PResult<'a, ()> {
    let glued = unit_word(i.fragment());
    if glued.is_empty() {
        let (j, ()) = ws(i)?;
        if j.location_offset() == i.location_offset() {
            return Ok((i, ()));
        }
        let spaced = unit_word(j.fragment());
        return match interpret_unit(spaced) {
            Some((p, Some(u))) => {
                check_prefix_allowed(&j, spaced, p, u)?;
                lit.prefix = p;
                lit.unit = Some(u);
                Ok((j.take_from(spaced.len()), ()))
            }
            _ => Ok((i, ())),
        };
    }
    match interpret_unit(glued) {
        Some((p, u)) => {
            if let (Some(u), p) = (u, p) {
                check_prefix_allowed(&i, glued, p, u)?;
            }
            lit.prefix = p;
            lit.unit = u;
            Ok((i.take_from(glued.len()), ()))
        }
        None => fail(bad_suffix(&i, start, glued)),
    }
}

fn check_prefix_allowed(
    i: &In<'_>,
    word: &str,
    prefix: Option<i64>,
    unit: UnitSym,
) -> Result<(), nom::Err<PError>> {
    if prefix.is_some() && !unit.takes_prefix() {
        return fail(
            PError::custom(
                i.location_offset(),
                word.len(),
                DiagnosticKind::Syntax,
                format!("`{word}`: an SI prefix cannot go on this unit"),
            )
            .label("expected the unit without a prefix"),
        );
    }
    Ok(())
}

/// The error for a word glued to a number that is no unit, with the refusals.
fn bad_suffix(i: &In<'_>, start: &In<'_>, word: &str) -> PError {
    let number = &start.fragment()[..i.location_offset() - start.location_offset()];
    let at = i.location_offset();
    if let Some(rest) = word.strip_prefix('K') {
        return PError::custom(
            at,
            1,
            DiagnosticKind::Refusal,
            "`K` is not an SI prefix: kilo is a lower-case `k`".into(),
        )
        .label(format!("write `{number}k{rest}`"));
    }
    if word.to_ascii_lowercase().starts_with("meg") {
        return PError::custom(
            at,
            3,
            DiagnosticKind::Refusal,
            format!(
                "`{}` is not an SI prefix: mega is `M` (and `m` is milli)",
                &word[..3]
            ),
        )
        .label(format!("write `{number}M{}`", &word[3..]));
    }
    PError::custom(at, word.len(), DiagnosticKind::Syntax, format!("`{word}` is not a unit"))
        .label("expected a unit (Ω, F, H, V, A, S, Hz, s, %, deg, dB, dB/dec, dB/oct) after an optional SI prefix (f p n u µ m k M G T)")
        .help("a name never directly follows a number; in an expression put an operator between them (`2 * x`)")
}

/// A literal with an optional sign (`-`, `+`, or the typographic minus U+2212).
fn signed_literal(i: In<'_>) -> PResult<'_, (Literal<'_>, Span)> {
    let (i, ()) = ws(i)?;
    let start = i;
    let (i, negative) = sign(i);
    let (i, (mut lit, span)) = if negative.is_some() {
        cut_err(literal(i))?
    } else {
        literal(i)?
    };
    if negative == Some(true) {
        lit.negative = true;
        lit.cached = lit.cached.map(|v| -v);
    }
    Ok((i, (lit, Span::new(start.location_offset(), span.end))))
}

/// A leading sign: `Some(true)` for minus, `Some(false)` for plus.
fn sign(i: In<'_>) -> (In<'_>, Option<bool>) {
    let frag = i.fragment();
    if frag.starts_with('-') {
        (i.take_from(1), Some(true))
    } else if frag.starts_with('\u{2212}') {
        (i.take_from(3), Some(true))
    } else if frag.starts_with('+') && !frag.starts_with("+-") {
        (i.take_from(1), Some(false))
    } else {
        (i, None)
    }
}

// ---------------------------------------------------------------- expressions

fn too_deep(i: &In<'_>) -> nom::Err<PError> {
    nom::Err::Failure(
        PError::custom(
            i.location_offset(),
            1,
            DiagnosticKind::TooDeep,
            format!("the expression is nested too deeply (at most {MAX_DEPTH} levels of parentheses, signs and powers)"),
        )
        .label("nesting limit reached here"),
    )
}

fn binary<'s>(op: BinOp, lhs: Expr<'s>, rhs: Expr<'s>) -> Expr<'s> {
    let span = lhs.span.join(rhs.span);
    Expr {
        kind: ExprKind::Binary(op, Box::new(lhs), Box::new(rhs)),
        span,
    }
}

/// `expr := term (("+" | "-") term)*`
pub(crate) fn expr(i: In<'_>, depth: u32) -> PResult<'_, Expr<'_>> {
    let (mut i, mut lhs) = term(i, depth)?;
    loop {
        let (j, ()) = ws(i)?;
        let frag = j.fragment();
        let (op, len) = if frag.starts_with('+') && !frag.starts_with("+-") {
            (BinOp::Add, 1)
        } else if frag.starts_with('-') {
            (BinOp::Sub, 1)
        } else if frag.starts_with('\u{2212}') {
            (BinOp::Sub, 3)
        } else {
            return Ok((i, lhs));
        };
        let (j, rhs) = cut_err(term(j.take_from(len), depth))?;
        lhs = binary(op, lhs, rhs);
        i = j;
    }
}

/// `term := unary (("*" | "/") unary)*`
fn term(i: In<'_>, depth: u32) -> PResult<'_, Expr<'_>> {
    let (mut i, mut lhs) = unary(i, depth)?;
    loop {
        let (j, ()) = ws(i)?;
        let frag = j.fragment();
        let op = if frag.starts_with('*') {
            BinOp::Mul
        } else if frag.starts_with('/') {
            BinOp::Div
        } else {
            return Ok((i, lhs));
        };
        let (j, rhs) = cut_err(unary(j.take_from(1), depth))?;
        lhs = binary(op, lhs, rhs);
        i = j;
    }
}

/// `unary := ("-" | "+") unary | power`
fn unary(i: In<'_>, depth: u32) -> PResult<'_, Expr<'_>> {
    let (i, ()) = ws(i)?;
    let start = i;
    let (j, s) = sign(i);
    match s {
        Some(negative) => {
            if depth >= MAX_DEPTH {
                return Err(too_deep(&i));
            }
            let (j, inner) = cut_err(unary(j, depth + 1))?;
            let span = Span::new(start.location_offset(), inner.span.end);
            let kind = if negative {
                ExprKind::Neg(Box::new(inner))
            } else {
                inner.kind
            };
            Ok((j, Expr { kind, span }))
        }
        None => power(i, depth),
    }
}

/// `power := atom ("^" unary)?` (right-associative)
fn power(i: In<'_>, depth: u32) -> PResult<'_, Expr<'_>> {
    let (i, base) = atom(i, depth)?;
    let (j, ()) = ws(i)?;
    if j.fragment().starts_with('^') {
        if depth >= MAX_DEPTH {
            return Err(too_deep(&j));
        }
        let (j, exponent) = cut_err(unary(j.take_from(1), depth + 1))?;
        return Ok((j, binary(BinOp::Pow, base, exponent)));
    }
    Ok((i, base))
}

/// `atom := number | "pi" | function "(" args ")" | name | "(" expr ")"`
fn atom(i: In<'_>, depth: u32) -> PResult<'_, Expr<'_>> {
    let (i, ()) = ws(i)?;
    let start = i;
    let frag = i.fragment();
    if frag.starts_with('(') {
        if depth >= MAX_DEPTH {
            return Err(too_deep(&i));
        }
        let (j, inner) = cut_err(expr(i.take_from(1), depth + 1))?;
        let (j, ()) = cut_err(sym(")", "an operator or `)`")(j))?;
        return Ok((
            j,
            Expr {
                kind: inner.kind,
                span: span_of(&start, &j),
            },
        ));
    }
    if frag.starts_with(|c: char| c.is_ascii_digit()) {
        let (j, (lit, span)) = literal(i)?;
        return Ok((
            j,
            Expr {
                kind: ExprKind::Number(lit),
                span,
            },
        ));
    }
    let Ok((j, id)) = name(i) else {
        return err(&i, "a value (a number, a name or `(`)");
    };
    if id.name == "pi" {
        return Ok((
            j,
            Expr {
                kind: ExprKind::Pi,
                span: id.span,
            },
        ));
    }
    if let Some(func) = Func::from_name(id.name).filter(|_| j.fragment().starts_with('(')) {
        return call(j, start, func, depth);
    }
    Ok((
        j,
        Expr {
            kind: ExprKind::Name(id.name),
            span: id.span,
        },
    ))
}

fn call<'a>(i: In<'a>, start: In<'a>, func: Func, depth: u32) -> PResult<'a, Expr<'a>> {
    if depth >= MAX_DEPTH {
        return Err(too_deep(&i));
    }
    let mut args = Vec::new();
    let (mut i, first) = cut_err(expr(i.take_from(1), depth + 1))?;
    args.push(first);
    while let Ok((j, ())) = sym(",", "")(i) {
        let (j, a) = cut_err(expr(j, depth + 1))?;
        args.push(a);
        i = j;
    }
    let (i, ()) = cut_err(sym(")", "`,` or `)`")(i))?;
    let span = span_of(&start, &i);
    if args.len() != func.arity() {
        return fail(
            PError::custom(
                span.start,
                span.end - span.start,
                DiagnosticKind::Syntax,
                format!(
                    "this function takes {} argument(s), not {}",
                    func.arity(),
                    args.len()
                ),
            )
            .label(format!("expected {} argument(s)", func.arity())),
        );
    }
    Ok((
        i,
        Expr {
            kind: ExprKind::Call(func, args),
            span,
        },
    ))
}

/// A value where the grammar expects one: a signed literal, a name, a function call
/// or a parenthesised expression.
fn value(i: In<'_>) -> PResult<'_, Expr<'_>> {
    let (i, ()) = ws(i)?;
    let frag = i.fragment();
    if frag.starts_with(|c: char| c.is_ascii_digit() || c == '-' || c == '+' || c == '\u{2212}')
        && let Ok((j, (lit, span))) = signed_literal(i)
    {
        return Ok((
            j,
            Expr {
                kind: ExprKind::Number(lit),
                span,
            },
        ));
    }
    match atom(i, 0) {
        Err(nom::Err::Error(_)) => err(&i, "a value (a number, a name or `(`)"),
        other => other,
    }
}

/// Gives a bare lower end of a range the trailing unit (and prefix) of its upper end:
/// `within -5 .. 5 mV` is −5 mV to 5 mV.
fn share_unit(low: &mut Expr, high: &Expr) {
    if let (ExprKind::Number(lo), ExprKind::Number(hi)) = (&mut low.kind, &high.kind)
        && lo.unit.is_none()
        && hi.unit.is_some()
    {
        if lo.prefix.is_none() {
            lo.prefix = hi.prefix;
        }
        lo.unit = hi.unit;
        // The lower end read fine without the unit; with it, it can only shift in scale.
        let _ = lo.cache();
    }
}

/// `value ".." value`, the lower end sharing the upper end's unit.
fn range(i: In<'_>) -> PResult<'_, (Expr<'_>, Expr<'_>)> {
    let (i, mut low) = value(i)?;
    let (i, ()) = cut_err(sym("..", "`..` and the upper end")(i))?;
    let (i, high) = cut_err(value(i))?;
    share_unit(&mut low, &high);
    Ok((i, (low, high)))
}

// ---------------------------------------------------------------- statements

/// The statement keywords, for the unknown-keyword message.
pub(crate) const KEYWORDS: &[&str] = &[
    "title",
    "let",
    "resistor",
    "capacitor",
    "inductor",
    "vsrc",
    "isrc",
    "vcvs",
    "vccs",
    "opamp",
    "drive",
    "block",
    "end",
    "use",
    "chain",
    "sweep",
    "probe",
    "expect",
];

/// One line's statement (comment already removed).
fn statement(i: In<'_>) -> PResult<'_, StmtKind<'_>> {
    let (i, ()) = ws(i)?;
    let Ok((rest, kw)) = word(i) else {
        return fail(not_a_statement(&i));
    };
    // Once the keyword is known the line is committed: `cut` keeps errors on the real
    // token, and `context` names the statement in the message.
    let (rest, stmt) = match kw.name {
        "title" => cut(context("a `title` line", title)).parse(rest),
        "let" => cut(context("a `let` line", let_stmt)).parse(rest),
        "drive" => cut(context("a `drive` line", |i| {
            name(i).map(|(j, n)| (j, StmtKind::Drive(n)))
        }))
        .parse(rest),
        "block" => cut(context("a `block` line", block_header)).parse(rest),
        "end" => Ok((rest, StmtKind::End)),
        "use" => cut(context("a `use` line", |i| use_stmt(i, None))).parse(rest),
        "chain" => cut(context("a `chain` line", chain_stmt)).parse(rest),
        "sweep" => cut(context("a `sweep` line", sweep)).parse(rest),
        "probe" => cut(context("a `probe` line", probe)).parse(rest),
        "expect" => cut(context("an `expect` line", expect)).parse(rest),
        w => match PartKeyword::from_word(w) {
            Some(k) => cut(context("a part line", |i| part(i, k))).parse(rest),
            None => return fail(unknown_keyword(&kw)),
        },
    }?;
    let (rest, ()) = ws(rest)?;
    if !rest.fragment().is_empty() {
        return fail(PError::at(&rest, "the end of the line"));
    }
    Ok((rest, stmt))
}

fn not_a_statement(i: &In<'_>) -> PError {
    let frag = i.fragment();
    let (message, help) = if frag.starts_with('.') {
        (
            "a line cannot start with a dot",
            "statements start with a keyword such as `sweep` or `probe`",
        )
    } else if frag.starts_with('+') {
        (
            "a line cannot start with `+`",
            "there are no continuation lines: write the statement on one line",
        )
    } else {
        (
            "expected a statement",
            "a line starts with a keyword such as `resistor`, `let` or `probe`",
        )
    };
    PError::custom(
        i.location_offset(),
        found_token(frag).len(),
        DiagnosticKind::UnknownKeyword,
        message.into(),
    )
    .label("expected a statement keyword")
    .help(help)
}

fn unknown_keyword(kw: &Ident) -> PError {
    let lower = kw.name.to_ascii_lowercase();
    let help = if KEYWORDS.contains(&lower.as_str()) {
        format!("keywords are lower case: write `{lower}`")
    } else if let Some(close) = crate::elaborate::similar(kw.name, KEYWORDS.iter().copied()) {
        format!("did you mean `{close}`?")
    } else {
        "a line starts with a statement keyword; the kind of a part is written out (`resistor R1 (a, b) 1k`), never taken from its name".into()
    };
    PError::custom(
        kw.span.start,
        kw.name.len(),
        DiagnosticKind::UnknownKeyword,
        format!("unknown statement `{}`", kw.name),
    )
    .label(format!("expected one of {}", KEYWORDS.join(", ")))
    .help(help)
}

/// `title "text"`
fn title(i: In<'_>) -> PResult<'_, StmtKind<'_>> {
    let (i, ()) = ws(i)?;
    if !i.fragment().starts_with('"') {
        return err(&i, "a quoted title (`\"…\"`)");
    }
    let mut text = String::new();
    let mut chars = i.fragment()[1..].char_indices();
    while let Some((k, c)) = chars.next() {
        match c {
            '"' => return Ok((i.take_from(k + 2), StmtKind::Title(text))),
            '\\' => match chars.next() {
                Some((_, e @ ('"' | '\\'))) => text.push(e),
                Some((_, 'n')) => text.push('\n'),
                _ => {
                    return fail(
                        PError::custom(
                            i.location_offset() + 1 + k,
                            2,
                            DiagnosticKind::Syntax,
                            "unknown escape in a title".into(),
                        )
                        .label("expected `\\\"`, `\\\\` or `\\n`"),
                    );
                }
            },
            c => text.push(c),
        }
    }
    fail(
        PError::custom(
            i.location_offset(),
            i.fragment().len(),
            DiagnosticKind::Syntax,
            "the title has no closing `\"`".into(),
        )
        .label("expected a closing `\"` on this line"),
    )
}

/// `let name = expr`
fn let_stmt(i: In<'_>) -> PResult<'_, StmtKind<'_>> {
    let (i, n) = word(i)?;
    let (i, ()) = sym("=", "`=`")(i)?;
    let (i, e) = expr(i, 0)?;
    Ok((i, StmtKind::Let(n, e)))
}

/// `<kind> name (nodes) [from (nodes)] [value] [options]`
fn part(i: In<'_>, keyword_kind: PartKeyword) -> PResult<'_, StmtKind<'_>> {
    let (i, n) = name(i)?;
    let (i, (nodes, _)) = node_list(i)?;
    let (mut i, from) = if keyword_kind.has_from() {
        let Ok((i, _)) = keyword("from")(i) else {
            return err(&i, "`from` and the controlling nodes");
        };
        let (i, (from, _)) = node_list(i)?;
        (i, from)
    } else {
        (i, Vec::new())
    };
    let mut value_syntax = None;
    if keyword_kind.has_value() {
        let (j, ()) = ws(i)?;
        let next = word(j).ok().map(|(_, w)| w.name);
        let is_option = next.is_some_and(|w| keyword_kind.options().contains(&w));
        if j.fragment().starts_with('?') {
            let (j2, v) = fit_value(j)?;
            value_syntax = Some(v);
            i = j2;
        } else if !j.fragment().is_empty() && !is_option {
            let (j2, v) = value(j)?;
            value_syntax = Some(PartValue::Expr(v));
            i = j2;
        } else if !matches!(keyword_kind, PartKeyword::Vsrc | PartKeyword::Isrc) {
            return err(&j, "the part's value");
        }
    }
    let (i, options) = part_options(i, keyword_kind)?;
    Ok((
        i,
        StmtKind::Part(PartStmt {
            keyword: keyword_kind,
            name: n,
            nodes,
            from,
            value: value_syntax,
            options,
        }),
    ))
}

/// `?` or `? in lo .. hi`
fn fit_value(i: In<'_>) -> PResult<'_, PartValue<'_>> {
    let start = i;
    let i = i.take_from(1);
    if let Ok((j, _)) = keyword("in")(i) {
        let (j, (low, high)) = cut_err(range(j))?;
        return Ok((
            j,
            PartValue::Fit {
                range: Some((low, high)),
                span: span_of(&start, &j),
            },
        ));
    }
    Ok((
        i,
        PartValue::Fit {
            range: None,
            span: span_of(&start, &i),
        },
    ))
}

fn part_options(mut i: In<'_>, k: PartKeyword) -> PResult<'_, Vec<(PartOption<'_>, Span)>> {
    let mut options: Vec<(PartOption, Span)> = Vec::new();
    // Bit `k` set: option `k` of `k.options()` was given (a kind has at most three).
    let mut seen = 0u8;
    loop {
        let (j, ()) = ws(i)?;
        if j.fragment().is_empty() {
            return Ok((j, options));
        }
        let Ok((after, w)) = word(j) else {
            return err(&j, option_expectation(k));
        };
        let Some(index) = k.options().iter().position(|&o| o == w.name) else {
            return fail(bad_option(&w, k));
        };
        let option = k.options()[index];
        if seen & (1 << index) != 0 {
            return fail(
                PError::custom(
                    w.span.start,
                    w.name.len(),
                    DiagnosticKind::Duplicate,
                    format!("`{option}` is given twice"),
                )
                .label("second one here"),
            );
        }
        seen |= 1 << index;
        if options.is_empty() {
            // One option is the usual case, and an option is large: no spare room.
            options.reserve_exact(1);
        }
        let (after, parsed) = match option {
            "polar" => (after, PartOption::Polar),
            "tol" => {
                let (a, mut low) = cut_err(value(after))?;
                if peek_sym(&a, "..") {
                    let (a, ()) = sym("..", "")(a)?;
                    let (a, high) = cut_err(value(a))?;
                    share_unit(&mut low, &high);
                    (a, PartOption::Tol(low, Some(high)))
                } else {
                    (a, PartOption::Tol(low, None))
                }
            }
            "swing" => {
                let (a, (low, high)) = cut_err(range(after))?;
                (a, PartOption::Swing(low, high))
            }
            other => {
                let (a, v) = cut_err(value(after))?;
                (a, PartOption::Value(other, v))
            }
        };
        options.push((parsed, span_of(&j, &after)));
        i = after;
    }
}

fn option_expectation(k: PartKeyword) -> &'static str {
    match k {
        PartKeyword::Resistor | PartKeyword::Inductor => "`tol` or the end of the line",
        PartKeyword::Capacitor => "`tol`, `rated`, `polar` or the end of the line",
        PartKeyword::Vsrc => "`phase`, `bias`, `rs` or the end of the line",
        PartKeyword::Isrc => "`phase`, `bias`, `rp` or the end of the line",
        PartKeyword::Vcvs => "`gain` or the end of the line",
        PartKeyword::Vccs => "`gm` or the end of the line",
        PartKeyword::Opamp => "`gain`, `gbw`, `swing` or the end of the line",
    }
}

fn bad_option(w: &Ident, k: PartKeyword) -> PError {
    let all = [
        "tol", "rated", "polar", "phase", "bias", "rs", "rp", "gain", "gm", "gbw", "swing",
    ];
    let message = if all.contains(&w.name) {
        format!("`{}` is not an option of a `{}`", w.name, k.word())
    } else {
        format!("unexpected `{}`", w.name)
    };
    let e = PError::custom(w.span.start, w.name.len(), DiagnosticKind::Syntax, message)
        .label(format!("expected {}", option_expectation(k)));
    if w.name.chars().count() == 1 && w.name.chars().all(|c| prefix_exponent(c).is_some()) {
        return e.help(format!(
            "an SI prefix is glued to the number (`10{0}`) or to its unit (`10 {0}Ω`)",
            w.name
        ));
    }
    e
}

/// `block name (pins) [param = value, …]`
fn block_header(i: In<'_>) -> PResult<'_, StmtKind<'_>> {
    let (i, n) = word(i)?;
    let (i, (pins, _)) = node_list(i)?;
    let (i, params) = assignments(i)?;
    Ok((
        i,
        StmtKind::BlockStart(BlockDef {
            name: n,
            pins,
            params,
            body: Vec::new(),
        }),
    ))
}

/// `name = value, name = value`, possibly empty.
fn assignments(i: In<'_>) -> PResult<'_, Vec<(Ident<'_>, Expr<'_>)>> {
    let mut out = Vec::new();
    let (j, ()) = ws(i)?;
    if j.fragment().is_empty() {
        return Ok((j, out));
    }
    let mut i = j;
    loop {
        let (j, n) = word(i)?;
        let (j, ()) = sym("=", "`=` and a value")(j)?;
        let (j, v) = value(j)?;
        out.push((n, v));
        match sym(",", "")(j) {
            Ok((j, ())) => i = j,
            Err(_) => return Ok((j, out)),
        }
    }
}

/// `use block name (nodes) [param = value, …]`
fn use_stmt(i: In<'_>, chain: Option<(u64, Span)>) -> PResult<'_, StmtKind<'_>> {
    let (i, block) = word(i)?;
    let (i, n) = name(i)?;
    let (i, (nodes, nodes_span)) = node_list(i)?;
    let (i, overrides) = assignments(i)?;
    Ok((
        i,
        StmtKind::Use(UseStmt {
            chain,
            block,
            name: n,
            nodes,
            nodes_span,
            overrides,
        }),
    ))
}

/// `chain N block name (in, out) [param = value, …]`
fn chain_stmt(i: In<'_>) -> PResult<'_, StmtKind<'_>> {
    let (i, ()) = ws(i)?;
    let start = i;
    let Ok((i, digits)) = digit1::<_, PError>(i) else {
        return err(&i, "the number of stages");
    };
    let span = span_of(&start, &i);
    let count = digits.fragment().parse::<u64>().unwrap_or(u64::MAX);
    use_stmt(i, Some((count, span)))
}

/// `sweep F to F per_decade N`, `sweep F to F every DF`, `sweep at F, F, …`
fn sweep(i: In<'_>) -> PResult<'_, StmtKind<'_>> {
    if let Ok((i, _)) = keyword("at")(i) {
        let (mut i, first) = value(i)?;
        let mut points = vec![first];
        while let Ok((j, ())) = sym(",", "")(i) {
            let (j, p) = value(j)?;
            points.push(p);
            i = j;
        }
        return Ok((i, StmtKind::Sweep(SweepStmt::List(points))));
    }
    let (i, start) = value(i)?;
    let (i, _) = keyword("to")(i).or_else(|_: nom::Err<PError>| err(&i, "`to`"))?;
    let (i, stop) = value(i)?;
    if let Ok((i, _)) = keyword("per_decade")(i) {
        let (i, n) = value(i)?;
        return Ok((
            i,
            StmtKind::Sweep(SweepStmt::Log {
                start,
                stop,
                per_decade: n,
            }),
        ));
    }
    if let Ok((i, _)) = keyword("every")(i) {
        let (i, step) = value(i)?;
        return Ok((i, StmtKind::Sweep(SweepStmt::Linear { start, stop, step })));
    }
    err(&i, "`per_decade` or `every`")
}

/// `probe node`, `probe zin`, `probe name = …`, each with an optional `ref F`.
fn probe(i: In<'_>) -> PResult<'_, StmtKind<'_>> {
    let (i, first) = name(i)?;
    let (i, what) = if peek_sym(&i, "=") && !peek_sym(&i, "==") {
        let (i, ()) = sym("=", "")(i)?;
        probe_definition(i)?
    } else if first.name == "zin" {
        (i, ProbeWhat::Zin)
    } else {
        (i, ProbeWhat::Node(first.clone()))
    };
    let (i, reference) = match keyword("ref")(i) {
        Ok((i, _)) => {
            let (i, v) = value(i)?;
            (i, Some(v))
        }
        Err(_) => (i, None),
    };
    Ok((
        i,
        StmtKind::Probe(ProbeStmt {
            name: first,
            what,
            reference,
        }),
    ))
}

fn probe_definition(i: In<'_>) -> PResult<'_, ProbeWhat<'_>> {
    if let Ok((i, _)) = keyword("current")(i) {
        let (i, p) = name(i)?;
        return Ok((i, ProbeWhat::Current(p)));
    }
    if let Ok((i, _)) = keyword("zout")(i) {
        let (i, n) = node(i)?;
        return Ok((i, ProbeWhat::Zout(n)));
    }
    if let Ok((i, _)) = keyword("zin")(i) {
        return Ok((i, ProbeWhat::Zin));
    }
    let (i, a) = node(i).or_else(|_| err(&i, "a node, `current`, `zin` or `zout`"))?;
    if let Ok((j, ())) = sym("/", "")(i) {
        let (j, b) = node(j)?;
        return Ok((j, ProbeWhat::Ratio(a, b)));
    }
    let (k, ()) = ws(i)?;
    let (j, s) = sign(k);
    if s == Some(true) {
        let (j, b) = node(j)?;
        return Ok((j, ProbeWhat::Difference(a, b)));
    }
    Ok((i, ProbeWhat::Node(a)))
}

/// `expect metric(target, args…) comparison`
fn expect(i: In<'_>) -> PResult<'_, StmtKind<'_>> {
    let (i, metric) = word(i)?;
    let (i, ()) = sym("(", "`(` and what to measure")(i)?;
    let (i, target) = if let Ok((i, _)) = keyword("current")(i) {
        let (i, p) = name(i)?;
        (i, TargetSyntax::Current(p))
    } else {
        let (i, n) = node(i)?;
        (i, TargetSyntax::Name(n))
    };
    let mut args = Vec::new();
    let mut i = i;
    while let Ok((j, ())) = sym(",", "")(i) {
        let (j, arg) = if let Ok((j2, kw)) = keyword("ref")(j) {
            let (j2, v) = value(j2)?;
            (j2, MetricArg::Ref(v, kw))
        } else if let Ok((j2, kw)) = keyword("level")(j) {
            let (j2, v) = value(j2)?;
            (j2, MetricArg::Level(v, kw))
        } else {
            let (j2, v) = value(j)?;
            (j2, MetricArg::Value(v))
        };
        args.push(arg);
        i = j;
    }
    let (i, ()) = sym(")", "`,` or `)`")(i)?;
    let (i, comparison) = comparison(i)?;
    Ok((
        i,
        StmtKind::Expect(ExpectStmt {
            metric,
            target,
            args,
            comparison,
        }),
    ))
}

fn comparison(i: In<'_>) -> PResult<'_, CmpSyntax<'_>> {
    let (i, ()) = ws(i)?;
    if let Ok((j, _)) = keyword("within")(i) {
        let (j, (low, high)) = range(j)?;
        return Ok((j, CmpSyntax::Within(low, high)));
    }
    let frag = *i.fragment();
    for (op, len) in [("<=", 2), (">=", 2), ("<", 1), (">", 1), ("=", 1)] {
        if frag.starts_with(op) {
            let (j, v) = value(i.take_from(len))?;
            let cmp = match op {
                "<=" => CmpSyntax::LessEqual(v),
                ">=" => CmpSyntax::GreaterEqual(v),
                "<" => CmpSyntax::Less(v),
                ">" => CmpSyntax::Greater(v),
                _ => {
                    let (k, ()) = ws(j)?;
                    let tol_len = if k.fragment().starts_with('±') {
                        '±'.len_utf8()
                    } else if k.fragment().starts_with("+-") {
                        2
                    } else {
                        0
                    };
                    if tol_len == 0 {
                        return Ok((j, CmpSyntax::Equal(v, None)));
                    }
                    let (k, tol) = value(k.take_from(tol_len))?;
                    return Ok((k, CmpSyntax::Equal(v, Some(tol))));
                }
            };
            return Ok((j, cmp));
        }
    }
    err(
        &i,
        "a comparison (`<`, `<=`, `>`, `>=`, `= x ± tol` or `within lo .. hi`)",
    )
}

// ---------------------------------------------------------------- lines and blocks

/// Where a line's comment starts (a `#` outside a quoted title), or its length.
fn comment_start(line: &str) -> usize {
    if !line.contains('#') {
        return line.len();
    }
    let mut in_string = false;
    let mut escaped = false;
    for (k, c) in line.char_indices() {
        match c {
            _ if escaped => escaped = false,
            '\\' if in_string => escaped = true,
            '"' => in_string = !in_string,
            '#' if !in_string => return k,
            _ => {}
        }
    }
    line.len()
}

/// Parses a whole source: every line's statement, blocks grouped, and every error.
pub(crate) fn parse(source: &str) -> (Vec<Stmt<'_>>, Vec<Diagnostic>) {
    with_base(source, || parse_lines(source))
}

fn parse_lines(source: &str) -> (Vec<Stmt<'_>>, Vec<Diagnostic>) {
    let n_lines = source.bytes().filter(|&b| b == b'\n').count() + 1;
    let mut statements = Vec::with_capacity(n_lines);
    let mut diagnostics = Vec::new();
    let mut rest: In<'_> = source;
    while !rest.fragment().is_empty() {
        let frag = *rest.fragment();
        let line_len = frag.find('\n').unwrap_or(frag.len());
        let line_start = rest.location_offset();
        let line = &frag[..line_len];
        let content_len = line[..comment_start(line)]
            .trim_end_matches([' ', '\t', '\r'])
            .len();
        if content_len > MAX_LINE {
            diagnostics.push(
                Diagnostic::error(
                    DiagnosticKind::LineTooLong,
                    Span::new(line_start + MAX_LINE, line_start + MAX_LINE + 1),
                    format!("the line is {content_len} bytes long; at most {MAX_LINE} are allowed"),
                )
                .with_expected("the line should have ended before here"),
            );
        } else if !line[..content_len]
            .trim_start_matches([' ', '\t'])
            .is_empty()
        {
            let input = rest.take(content_len);
            match statement(input) {
                Ok((_, kind)) => statements.push(Stmt {
                    kind,
                    span: Span::new(
                        line_start
                            + (content_len
                                - line[..content_len].trim_start_matches([' ', '\t']).len()),
                        line_start + content_len,
                    ),
                }),
                Err(nom::Err::Error(e) | nom::Err::Failure(e)) => {
                    diagnostics.push(e.into_diagnostic(line, line_start));
                }
                Err(nom::Err::Incomplete(_)) => diagnostics.push(Diagnostic::error(
                    DiagnosticKind::Syntax,
                    Span::new(line_start, line_start + content_len),
                    "the line ends too early",
                )),
            }
        }
        rest = rest.take_from((line_len + 1).min(frag.len()));
    }
    let statements = group_blocks(statements, &mut diagnostics);
    (statements, diagnostics)
}

/// Parses an expression on its own (a `--set` value); spans are relative to `text`.
pub(crate) fn parse_expression(text: &str) -> Result<Expr<'_>, Diagnostic> {
    with_base(text, || parse_expression_text(text))
}

fn parse_expression_text(text: &str) -> Result<Expr<'_>, Diagnostic> {
    let input: In<'_> = text;
    match expr(input, 0) {
        Ok((rest, e)) => {
            let (rest, ()) = ws(rest).map_err(|_| {
                Diagnostic::error(DiagnosticKind::Syntax, Span::default(), "bad value")
            })?;
            if rest.fragment().is_empty() {
                Ok(e)
            } else {
                Err(PError::at(&rest, "the end of the value").into_diagnostic(text, 0))
            }
        }
        Err(nom::Err::Error(e) | nom::Err::Failure(e)) => Err(e.into_diagnostic(text, 0)),
        Err(nom::Err::Incomplete(_)) => Err(Diagnostic::error(
            DiagnosticKind::Syntax,
            Span::default(),
            "incomplete value",
        )),
    }
}

/// Puts `block … end` together and checks what may appear inside a block.
fn group_blocks<'s>(statements: Vec<Stmt<'s>>, diagnostics: &mut Vec<Diagnostic>) -> Vec<Stmt<'s>> {
    let has_blocks = statements
        .iter()
        .any(|s| matches!(s.kind, StmtKind::BlockStart(_) | StmtKind::End));
    if !has_blocks {
        // Nothing to group: keep the vector (a large file is mostly part lines).
        return statements;
    }
    let mut top = Vec::with_capacity(statements.len());
    let mut open: Option<(BlockDef, Span)> = None;
    for stmt in statements {
        match stmt.kind {
            StmtKind::BlockStart(def) => {
                if let Some((outer, span)) = open.take() {
                    diagnostics.push(
                        Diagnostic::error(
                            DiagnosticKind::Unterminated,
                            stmt.span,
                            format!(
                                "a block cannot be defined inside block `{}`",
                                outer.name.name
                            ),
                        )
                        .with_expected("`end` the open block first")
                        .with_help("define blocks one after another; a block may `use` another"),
                    );
                    top.push(Stmt {
                        kind: StmtKind::Block(outer),
                        span,
                    });
                }
                open = Some((def, stmt.span));
            }
            StmtKind::End => match open.take() {
                Some((def, span)) => top.push(Stmt {
                    kind: StmtKind::Block(def),
                    span,
                }),
                None => diagnostics.push(
                    Diagnostic::error(
                        DiagnosticKind::Unterminated,
                        stmt.span,
                        "`end` without a `block`",
                    )
                    .with_expected("`end` closes a block and nothing else"),
                ),
            },
            kind @ (StmtKind::Part(_) | StmtKind::Use(_)) if open.is_some() => {
                if let Some((def, _)) = &mut open {
                    def.body.push(Stmt {
                        kind,
                        span: stmt.span,
                    });
                }
            }
            kind if open.is_some() => diagnostics.push(
                Diagnostic::error(
                    DiagnosticKind::Syntax,
                    stmt.span,
                    format!("`{}` is not allowed inside a block", statement_word(&kind)),
                )
                .with_expected("a part, `use`, `chain` or `end`"),
            ),
            kind => top.push(Stmt {
                kind,
                span: stmt.span,
            }),
        }
    }
    if let Some((def, span)) = open {
        diagnostics.push(
            Diagnostic::error(
                DiagnosticKind::Unterminated,
                def.name.span,
                format!("block `{}` has no `end`", def.name.name),
            )
            .with_expected("this block is still open at the end of the file")
            .with_help("add a line `end` after the block's last part"),
        );
        top.push(Stmt {
            kind: StmtKind::Block(def),
            span,
        });
    }
    top
}

fn statement_word(kind: &StmtKind) -> &'static str {
    match kind {
        StmtKind::Title(_) => "title",
        StmtKind::Let(..) => "let",
        StmtKind::Part(p) => p.keyword.word(),
        StmtKind::Drive(_) => "drive",
        StmtKind::Block(_) | StmtKind::BlockStart(_) => "block",
        StmtKind::End => "end",
        StmtKind::Use(u) if u.chain.is_some() => "chain",
        StmtKind::Use(_) => "use",
        StmtKind::Sweep(_) => "sweep",
        StmtKind::Probe(_) => "probe",
        StmtKind::Expect(_) => "expect",
    }
}
