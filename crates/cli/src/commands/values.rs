//! `rolloff values VALUE`: the standard values (IEC 60063) around a value, with their
//! IEC 60062 codes, and with `--combine` the best two-part combinations.
//!
//! The value is read by the language itself: `rolloff-netlist` has no public literal
//! parser, so the text is compiled as a one-line `let` used as the value of a
//! resistor, a capacitor and an inductor in turn. Whichever part accepts it gives the
//! unit (a bare number such as `4k7` fits all three and has no unit). Every literal
//! and expression of the language is accepted, and a mistake is shown with a caret.

use clap::Args;
use rolloff_netlist::{CompileOptions, PartKind};
use rolloff_tolerance::series::{Combination, Joining, Series, StandardValue};
use serde::Serialize;

use super::{COMMAND_LINE, Outcome, Reported, Session, message_of};
use crate::args::Format;
use crate::csv::{Cell, Csv};
use crate::eng::{NOT_A_NUMBER, eng, fixed};
use crate::input::Source;
use crate::json::to_json;
use crate::table::{Align, Table};

/// `rolloff values`.
#[derive(Debug, Args)]
pub struct ValuesArgs {
    /// The value, as the language writes it: `15.92n`, `4k7`, `15.92 nF`, `1/(2*pi*10k*1kHz)`.
    #[arg(value_name = "VALUE", allow_hyphen_values = true)]
    pub value: String,
    /// The standard series (E3, E6, E12, E24, E48, E96, E192).
    #[arg(long, value_name = "SERIES", default_value = "E24", value_parser = parse_series)]
    pub series: Series,
    /// Also give the best two-part series and parallel combinations.
    #[arg(long)]
    pub combine: bool,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
}

/// Parses a series name for clap (`E24`, `e96`).
///
/// # Errors
/// The library's message naming the accepted series.
pub fn parse_series(text: &str) -> Result<Series, String> {
    text.parse::<Series>().map_err(|e| e.to_string())
}

/// What a part value is measured in, as far as the text says.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ValueKind {
    /// Ω.
    Resistance,
    /// F.
    Capacitance,
    /// H.
    Inductance,
    /// A number without a unit.
    Plain,
}

impl ValueKind {
    /// The symbol shown after the number (empty for a plain number).
    pub fn symbol(self) -> &'static str {
        match self {
            ValueKind::Resistance => "Ω",
            ValueKind::Capacitance => "F",
            ValueKind::Inductance => "H",
            ValueKind::Plain => "",
        }
    }

    /// The unit in CSV and JSON (`ohm`, `F`, `H`, empty).
    pub fn unit_name(self) -> &'static str {
        match self {
            ValueKind::Resistance => "ohm",
            other => other.symbol(),
        }
    }

    /// How two parts joined by `joining` are wired: a sum is a series connection for
    /// resistors and inductors and a parallel one for capacitors. `None` for a plain
    /// number, whose kind of part is unknown.
    pub fn connection(self, joining: Joining) -> Option<&'static str> {
        let sum = joining == Joining::Sum;
        match self {
            ValueKind::Plain => None,
            ValueKind::Capacitance => Some(if sum { "parallel" } else { "series" }),
            _ => Some(if sum { "series" } else { "parallel" }),
        }
    }
}

const KEYWORDS: [(&str, ValueKind); 3] = [
    ("resistor", ValueKind::Resistance),
    ("capacitor", ValueKind::Capacitance),
    ("inductor", ValueKind::Inductance),
];

/// The text of the `let` line before the value.
const LET_PREFIX: &str = "let v = ";

/// Reads `text` as the language reads a part value.
///
/// # Errors
/// [`Reported`] (the diagnostics printed against the text) when it is not a positive
/// resistance, capacitance, inductance or plain number.
pub fn parse_value(text: &str, session: &Session) -> Result<(f64, ValueKind), Reported> {
    let mut accepted: Vec<(f64, ValueKind)> = Vec::new();
    let mut first_errors = None;
    for (keyword, kind) in KEYWORDS {
        let snippet = format!("{LET_PREFIX}{text}\n{keyword} X (a, gnd) v\n");
        let compiled = rolloff_netlist::compile(&snippet, &CompileOptions::default());
        let value = compiled
            .circuit
            .as_ref()
            .and_then(|c| match c.parts[0].kind {
                PartKind::Resistor {
                    value, fit: None, ..
                }
                | PartKind::Capacitor {
                    value, fit: None, ..
                }
                | PartKind::Inductor {
                    value, fit: None, ..
                } => Some(value),
                _ => None,
            });
        match value {
            Some(value) => accepted.push((value, kind)),
            None if first_errors.is_none() => first_errors = Some(compiled.diagnostics),
            None => {}
        }
    }
    match accepted.as_slice() {
        [] => {}
        [one] => return Ok(*one),
        [(value, _), ..] => return Ok((*value, ValueKind::Plain)),
    }
    // Errors on the `let` line are about the text itself: show them under it.
    let source = Source {
        name: COMMAND_LINE.to_string(),
        text: text.to_string(),
    };
    let start = LET_PREFIX.len();
    let end = start + text.len();
    let mut shown = false;
    for diagnostic in first_errors.iter().flatten().filter(|d| d.is_error()) {
        if diagnostic.span.start >= start && diagnostic.span.end <= end {
            let mut message = message_of(diagnostic);
            message.span = Some(diagnostic.span.start - start..diagnostic.span.end - start);
            session.message(&message, &source);
            shown = true;
        }
    }
    if shown {
        return Err(Reported);
    }
    Err(session.error(&format!(
        "`{text}` is not a positive resistance (Ω), capacitance (F) or inductance (H)"
    )))
}

/// Runs the command.
///
/// # Errors
/// [`Reported`] when the value cannot be read or lies outside the series' range.
pub fn run(args: &ValuesArgs, session: &Session) -> Result<Outcome, Reported> {
    let (value, kind) = parse_value(&args.value, session)?;
    let series = args.series;
    let out_of_range = || session.error(&format!("{value:e} is outside the range of the series"));
    let down = series.next_down(value).ok_or_else(out_of_range)?;
    let nearest = series.nearest(value).ok_or_else(out_of_range)?;
    let up = series.next_up(value).ok_or_else(out_of_range)?;
    let standard = vec![
        StandardView::new("next_down", down, value),
        StandardView::new("nearest", nearest, value),
        StandardView::new("next_up", up, value),
    ];
    let combinations = if args.combine {
        [series.best_sum(value), series.best_reciprocal(value)]
            .into_iter()
            .flatten()
            .map(|c| CombinationView::new(&c, kind))
            .collect()
    } else {
        Vec::new()
    };
    let view = ValuesView {
        input: args.value.clone(),
        value,
        unit: kind.unit_name(),
        series: series.name(),
        standard,
        combinations,
    };
    let text = match args.format {
        Format::Table => view.table(kind),
        Format::Csv => view.csv(),
        Format::Json => to_json(&view),
    };
    crate::input::print_stdout(&text);
    Ok(Outcome::Pass)
}

/// The JSON document of `rolloff values --format json` (field names are stable).
#[derive(Debug, Serialize)]
struct ValuesView {
    /// The text given.
    input: String,
    /// Its value in SI base units.
    value: f64,
    /// `ohm`, `F`, `H` or empty.
    unit: &'static str,
    /// The series' name.
    series: &'static str,
    /// Next down, nearest, next up.
    standard: Vec<StandardView>,
    /// With `--combine`: the best sum, then the best reciprocal pair.
    combinations: Vec<CombinationView>,
}

#[derive(Debug, Serialize)]
struct StandardView {
    /// `next_down`, `nearest` or `next_up`.
    role: &'static str,
    value: f64,
    /// The IEC 60062 code (`4k7`); `null` outside its range.
    code: Option<String>,
    /// `(standard − value) / value`.
    relative_error: f64,
}

impl StandardView {
    fn new(role: &'static str, standard: StandardValue, value: f64) -> Self {
        Self {
            role,
            value: standard.value,
            code: standard.code(),
            relative_error: relative_error(standard.value, value),
        }
    }
}

/// `(got − wanted) / wanted`, for a `wanted` the caller has checked is positive (the
/// series only answers for finite positive values). The one piece of arithmetic here:
/// the series' single values carry no error of their own, unlike its combinations.
fn relative_error(got: f64, wanted: f64) -> f64 {
    (got - wanted) / wanted
}

#[derive(Debug, Serialize)]
struct CombinationView {
    /// `sum` (a + b) or `reciprocal` (a·b/(a + b)).
    joining: &'static str,
    /// `series` or `parallel` for a part kind; `null` for a plain number.
    connection: Option<&'static str>,
    a: f64,
    a_code: Option<String>,
    b: f64,
    b_code: Option<String>,
    /// The combined value.
    value: f64,
    relative_error: f64,
}

impl CombinationView {
    fn new(c: &Combination, kind: ValueKind) -> Self {
        Self {
            joining: match c.joining {
                Joining::Sum => "sum",
                Joining::Reciprocal => "reciprocal",
            },
            connection: kind.connection(c.joining),
            a: c.a.value,
            a_code: c.a.code(),
            b: c.b.value,
            b_code: c.b.code(),
            value: c.value,
            relative_error: c.relative_error,
        }
    }
}

/// A relative error as a signed percentage (`+0.50 %`).
pub fn percent(fraction: f64) -> String {
    if !fraction.is_finite() {
        return NOT_A_NUMBER.to_string();
    }
    let text = fixed(100.0 * fraction, 2);
    if fraction > 0.0 && text.chars().any(|c| c.is_ascii_digit() && c != '0') {
        format!("+{text} %")
    } else {
        format!("{text} %")
    }
}

impl ValuesView {
    fn table(&self, kind: ValueKind) -> String {
        let unit = kind.symbol();
        let mut text = format!(
            "{} = {} in {}\n\n",
            self.input,
            eng(self.value, unit),
            self.series
        );
        let mut table = Table::new(&[
            ("standard", Align::Left),
            ("value", Align::Right),
            ("code", Align::Left),
            ("error", Align::Right),
        ]);
        for s in &self.standard {
            table.push(vec![
                s.role.replace('_', " "),
                eng(s.value, unit),
                s.code.clone().unwrap_or_default(),
                percent(s.relative_error),
            ]);
        }
        text.push_str(&table.render());
        if !self.combinations.is_empty() {
            let mut pairs = Table::new(&[
                ("two parts", Align::Left),
                ("a", Align::Right),
                ("b", Align::Right),
                ("codes", Align::Left),
                ("combined", Align::Right),
                ("error", Align::Right),
            ]);
            for c in &self.combinations {
                let how = match (c.connection, c.joining) {
                    (Some(connection), "sum") => format!("{connection} (a + b)"),
                    (Some(connection), _) => format!("{connection} (a·b/(a+b))"),
                    (None, "sum") => "a + b".to_string(),
                    (None, _) => "a·b/(a+b)".to_string(),
                };
                pairs.push(vec![
                    how,
                    eng(c.a, unit),
                    eng(c.b, unit),
                    format!(
                        "{} {}",
                        c.a_code.clone().unwrap_or_default(),
                        c.b_code.clone().unwrap_or_default()
                    ),
                    eng(c.value, unit),
                    percent(c.relative_error),
                ]);
            }
            text.push('\n');
            text.push_str(&pairs.render());
        }
        text
    }

    fn csv(&self) -> String {
        let header = [
            "kind",
            "connection",
            "value",
            "code",
            "a",
            "a_code",
            "b",
            "b_code",
            "unit",
            "relative_error",
        ]
        .map(String::from);
        let mut csv = Csv::new(&header);
        for s in &self.standard {
            csv.push(&[
                Cell::Text(s.role.into()),
                Cell::Text(String::new()),
                Cell::Number(Some(s.value)),
                Cell::Text(s.code.clone().unwrap_or_default()),
                Cell::Number(None),
                Cell::Text(String::new()),
                Cell::Number(None),
                Cell::Text(String::new()),
                Cell::Text(self.unit.into()),
                Cell::Number(Some(s.relative_error)),
            ]);
        }
        for c in &self.combinations {
            csv.push(&[
                Cell::Text(c.joining.into()),
                Cell::Text(c.connection.unwrap_or_default().into()),
                Cell::Number(Some(c.value)),
                Cell::Text(String::new()),
                Cell::Number(Some(c.a)),
                Cell::Text(c.a_code.clone().unwrap_or_default()),
                Cell::Number(Some(c.b)),
                Cell::Text(c.b_code.clone().unwrap_or_default()),
                Cell::Text(self.unit.into()),
                Cell::Number(Some(c.relative_error)),
            ]);
        }
        csv.into_text()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn percentages_are_signed() {
        assert_eq!(percent(0.005), "+0.50 %");
        assert_eq!(percent(-0.0578), "-5.78 %");
        assert_eq!(percent(0.0), "0.00 %");
        assert_eq!(percent(f64::NAN), NOT_A_NUMBER);
    }

    #[test]
    fn wiring_follows_the_part_kind() {
        assert_eq!(
            ValueKind::Capacitance.connection(Joining::Sum),
            Some("parallel")
        );
        assert_eq!(
            ValueKind::Resistance.connection(Joining::Reciprocal),
            Some("parallel")
        );
        assert_eq!(ValueKind::Plain.connection(Joining::Sum), None);
    }
}
