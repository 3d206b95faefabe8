//! Printing a [`Circuit`] back in the language: the canonical, flat form.
//!
//! Block instances appear expanded, with their qualified names (`S1.C`, `LAD.j1`),
//! every value in SI with its unit, and each number written so that it reads back to
//! exactly the same float; so `compile(circuit.to_string())` gives the same circuit
//! (spans aside).

use crate::circuit::{
    Circuit, Comparison, Deviation, Expectation, MetricKind, PartKind, Probe, ProbeKind, Sweep,
    Target, Tolerance, Unit,
};
use crate::units::{format_number, format_prefixed};
use std::fmt::{self, Write as _};

/// `value` with an SI prefix and unit symbol: `4.7 kΩ`, `100 nF`, `-5 mV`.
fn si(value: f64, unit: &str) -> String {
    let (number, prefix) = format_prefixed(value);
    format!("{number} {prefix}{unit}")
}

/// A fraction written as a percentage that reads back exactly: `5%`, `1.5e-1%`.
fn percent(fraction: f64) -> String {
    let text = format_number(fraction * 100.0);
    if !text.contains('e') && format!("{text}e-2").parse::<f64>().ok() == Some(fraction) {
        return format!("{text}%");
    }
    let sci = format!("{fraction:e}");
    match sci.split_once('e') {
        Some((mantissa, exp)) => {
            let exp: i64 = exp.parse().unwrap_or(0);
            format!("{mantissa}e{}%", exp + 2)
        }
        None => format!("{sci}%"),
    }
}

/// A number in a comparison unit: `16 Hz`, `20 dB`, `45 deg`, `10 kΩ`.
fn in_unit(value: f64, unit: Unit) -> String {
    match unit {
        Unit::Dimensionless => format_number(value),
        Unit::Decibel | Unit::Degree | Unit::DecibelPerDecade => {
            format!("{} {}", format_number(value), unit.symbol())
        }
        _ => si(value, unit.symbol()),
    }
}

fn tolerance(t: Tolerance) -> String {
    if t.lower == -t.upper {
        format!(" tol {}", percent(t.upper))
    } else {
        format!(" tol {} .. {}", percent(t.lower), percent(t.upper))
    }
}

fn quote(text: &str) -> String {
    let mut out = String::from("\"");
    for c in text.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

impl fmt::Display for Circuit {
    /// Prints the circuit in canonical, flat text, one statement a line.
    ///
    /// ```
    /// use rolloff_netlist::{compile, CompileOptions};
    /// let source = "vsrc V1 (in, gnd) 1 V\nresistor R1 (in, out) 4k7\ncapacitor C1 (out, gnd) 10n\n";
    /// let circuit = compile(source, &CompileOptions::default()).circuit.unwrap();
    /// let text = circuit.to_string();
    /// assert!(text.contains("resistor R1 (in, out) 4.7 kΩ"));
    /// let again = compile(&text, &CompileOptions::default()).circuit.unwrap();
    /// assert_eq!(again.parts.len(), 3);
    /// ```
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if let Some(title) = &self.title {
            writeln!(f, "title {}", quote(title))?;
        }
        let has_fit = self.parts.iter().any(|p| part_fit(&p.kind));
        for part in &self.parts {
            writeln!(f, "{}", part_line(self, &part.name, &part.kind))?;
        }
        if let Some(d) = self.drive {
            writeln!(f, "drive {}", self.parts[d.index()].name)?;
        }
        if let Some(s) = &self.sweep {
            writeln!(f, "{}", sweep_line(s))?;
        }
        for p in &self.probes {
            writeln!(f, "{}", probe_line(self, p))?;
        }
        for e in &self.expectations {
            writeln!(f, "expect {}", expectation_text_fit(self, e, has_fit))?;
        }
        Ok(())
    }
}

fn part_fit(kind: &PartKind) -> bool {
    matches!(
        kind,
        PartKind::Resistor { fit: Some(_), .. }
            | PartKind::Capacitor { fit: Some(_), .. }
            | PartKind::Inductor { fit: Some(_), .. }
    )
}

fn part_line(c: &Circuit, name: &str, kind: &PartKind) -> String {
    let node = |n: crate::NodeId| c.node_name(n).to_string();
    let mut line = String::new();
    match kind {
        PartKind::Resistor {
            a,
            b,
            value,
            tol,
            fit,
        }
        | PartKind::Inductor {
            a,
            b,
            value,
            tol,
            fit,
        }
        | PartKind::Capacitor {
            a,
            b,
            value,
            tol,
            fit,
            ..
        } => {
            let unit = match kind {
                PartKind::Resistor { .. } => "Ω",
                PartKind::Capacitor { .. } => "F",
                _ => "H",
            };
            let _ = write!(
                line,
                "{} {name} ({}, {}) ",
                kind.keyword(),
                node(*a),
                node(*b)
            );
            match fit {
                Some(r) => {
                    let _ = write!(line, "? in {} .. {}", si(r.low, unit), si(r.high, unit));
                }
                None => line.push_str(&si(*value, unit)),
            }
            if let Some(t) = tol {
                line.push_str(&tolerance(*t));
            }
            if let PartKind::Capacitor { rated, polar, .. } = kind {
                if let Some(r) = rated {
                    let _ = write!(line, " rated {}", si(*r, "V"));
                }
                if *polar {
                    line.push_str(" polar");
                }
            }
        }
        PartKind::VoltageSource {
            pos: a,
            neg: b,
            amplitude,
            phase_deg,
            bias,
            rs: r,
        }
        | PartKind::CurrentSource {
            from: a,
            to: b,
            amplitude,
            phase_deg,
            bias,
            rp: r,
        } => {
            let is_v = matches!(kind, PartKind::VoltageSource { .. });
            let unit = if is_v { "V" } else { "A" };
            let _ = write!(
                line,
                "{} {name} ({}, {})",
                kind.keyword(),
                node(*a),
                node(*b)
            );
            if let Some(a) = amplitude {
                let _ = write!(line, " {}", si(*a, unit));
            }
            if *phase_deg != 0.0 {
                let _ = write!(line, " phase {} deg", format_number(*phase_deg));
            }
            if let Some(v) = bias {
                let _ = write!(line, " bias {}", si(*v, unit));
            }
            if let Some(r) = r {
                let _ = write!(line, " {} {}", if is_v { "rs" } else { "rp" }, si(*r, "Ω"));
            }
        }
        PartKind::Vcvs {
            out_pos,
            out_neg,
            in_pos,
            in_neg,
            gain,
        } => {
            let _ = write!(
                line,
                "vcvs {name} ({}, {}) from ({}, {}) gain {}",
                node(*out_pos),
                node(*out_neg),
                node(*in_pos),
                node(*in_neg),
                format_number(*gain)
            );
        }
        PartKind::Vccs {
            out_pos,
            out_neg,
            in_pos,
            in_neg,
            gm,
        } => {
            let _ = write!(
                line,
                "vccs {name} ({}, {}) from ({}, {}) gm {}",
                node(*out_pos),
                node(*out_neg),
                node(*in_pos),
                node(*in_neg),
                si(*gm, "S")
            );
        }
        PartKind::OpAmp {
            out,
            in_pos,
            in_neg,
            gain,
            gbw,
            swing,
        } => {
            let _ = write!(
                line,
                "opamp {name} ({}) from ({}, {})",
                node(*out),
                node(*in_pos),
                node(*in_neg)
            );
            if let Some(g) = gain {
                let _ = write!(line, " gain {}", format_number(*g));
            }
            if let Some(g) = gbw {
                let _ = write!(line, " gbw {}", si(*g, "Hz"));
            }
            if let Some((lo, hi)) = swing {
                let _ = write!(line, " swing {} .. {}", si(*lo, "V"), si(*hi, "V"));
            }
        }
    }
    line
}

fn sweep_line(s: &Sweep) -> String {
    match s {
        Sweep::Log {
            start,
            stop,
            per_decade,
        } => {
            format!(
                "sweep {} to {} per_decade {per_decade}",
                si(*start, "Hz"),
                si(*stop, "Hz")
            )
        }
        Sweep::Linear { start, stop, step } => {
            format!(
                "sweep {} to {} every {}",
                si(*start, "Hz"),
                si(*stop, "Hz"),
                si(*step, "Hz")
            )
        }
        Sweep::List(points) => {
            let list: Vec<String> = points.iter().map(|f| si(*f, "Hz")).collect();
            format!("sweep at {}", list.join(", "))
        }
    }
}

fn probe_line(c: &Circuit, p: &Probe) -> String {
    let node = |n: crate::NodeId| c.node_name(n);
    let mut line = match &p.kind {
        ProbeKind::Node(n) if node(*n) == p.name => format!("probe {}", p.name),
        ProbeKind::Node(n) => format!("probe {} = {}", p.name, node(*n)),
        ProbeKind::Ratio { num, den } => {
            format!("probe {} = {} / {}", p.name, node(*num), node(*den))
        }
        ProbeKind::Difference { pos, neg } => {
            format!("probe {} = {} - {}", p.name, node(*pos), node(*neg))
        }
        ProbeKind::Current(part) => {
            format!("probe {} = current {}", p.name, c.parts[part.index()].name)
        }
        ProbeKind::InputImpedance if p.name == "zin" => "probe zin".to_string(),
        ProbeKind::InputImpedance => format!("probe {} = zin", p.name),
        ProbeKind::OutputImpedance(n) => format!("probe {} = zout {}", p.name, node(*n)),
    };
    if let Some(r) = p.reference {
        let _ = write!(line, " ref {}", si(r, "Hz"));
    }
    line
}

/// The canonical text of an expectation (without `expect`), as stored in
/// [`Expectation::text`].
pub(crate) fn expectation_text(c: &Circuit, e: &Expectation) -> String {
    let has_fit = c.parts.iter().any(|p| part_fit(&p.kind));
    expectation_text_fit(c, e, has_fit)
}

fn expectation_text_fit(c: &Circuit, e: &Expectation, has_fit: bool) -> String {
    let m = &e.metric;
    let target = match m.target {
        Target::Probe(p) => c.probes[p.index()].name.clone(),
        Target::Node(n) => c.node_name(n).to_string(),
        Target::Current(p) => format!("current {}", c.parts[p.index()].name),
        Target::Part(p) => c.parts[p.index()].name.clone(),
    };
    let (name, freqs): (&str, Vec<f64>) = match m.kind {
        MetricKind::Cutoff => ("cutoff", vec![]),
        MetricKind::CutoffLow => ("cutoff_low", vec![]),
        MetricKind::CutoffHigh => ("cutoff_high", vec![]),
        MetricKind::Bandwidth => ("bandwidth", vec![]),
        MetricKind::PassbandGain => ("passband_gain", vec![]),
        MetricKind::Resonance => ("resonance", vec![]),
        MetricKind::Q => ("q", vec![]),
        MetricKind::PeakGain => ("peak_gain", vec![]),
        MetricKind::PeakFreq => ("peak_freq", vec![]),
        MetricKind::Peaking => ("peaking", vec![]),
        MetricKind::NotchFreq => ("notch_freq", vec![]),
        MetricKind::NotchDepth => ("notch_depth", vec![]),
        MetricKind::Gain { freq } => ("gain", vec![freq]),
        MetricKind::Phase { freq } => ("phase", vec![freq]),
        MetricKind::GroupDelay { freq } => ("group_delay", vec![freq]),
        MetricKind::Slope { f1, f2 } => ("slope", vec![f1, f2]),
        MetricKind::Impedance { freq } => ("impedance", vec![freq]),
        MetricKind::Bias => ("bias", vec![]),
    };
    let mut text = format!("{name}({target}");
    for f in freqs {
        let _ = write!(text, ", {}", si(f, "Hz"));
    }
    if let Some(r) = m.options.reference {
        let _ = write!(text, ", ref {}", si(r, "Hz"));
    }
    if let Some(l) = m.options.level_db {
        let _ = write!(text, ", level {} dB", format_number(l));
    }
    text.push(')');
    let u = |v: f64| in_unit(v, e.unit);
    let _ = match e.comparison {
        Comparison::Less(v) => write!(text, " < {}", u(v)),
        Comparison::LessEqual(v) => write!(text, " <= {}", u(v)),
        Comparison::Greater(v) => write!(text, " > {}", u(v)),
        Comparison::GreaterEqual(v) => write!(text, " >= {}", u(v)),
        Comparison::Within { low, high } => write!(text, " within {} .. {}", u(low), u(high)),
        Comparison::Equal { value, deviation } => match deviation {
            Deviation::Relative(r) if r == 0.0 && has_fit => write!(text, " = {}", u(value)),
            Deviation::Relative(r) => write!(text, " = {} ± {}", u(value), percent(r)),
            Deviation::Absolute(d) => write!(text, " = {} ± {}", u(value), u(d)),
        },
    };
    text
}
