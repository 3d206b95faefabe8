//! The SVG histogram of one metric over the Monte Carlo runs: deterministic text (the
//! same report gives the same bytes), hand-written, no scripts or external styles.
//!
//! Layout: a title and a subtitle, a count axis on the left with light grid lines, the
//! bars (class `bar`, with `data-count`, `data-low` and `data-high` in SI base units),
//! the metric's value axis below, and vertical markers (class `marker`, `data-kind`
//! `nominal`, `p01` or `p99`) with their labels. Numbers in labels pass through
//! [`crate::eng`], so no `NaN` can appear.

use std::fmt::Write as _;

use rolloff_netlist::Unit;
use rolloff_tolerance::sampling::{Histogram, Summary};

use crate::eng::{eng_digits, fixed, fixed_unit};
use crate::junit::escape;

/// What one chart shows.
#[derive(Debug, Clone)]
pub struct Chart<'a> {
    /// The metric's label (`cutoff(adc)`).
    pub title: &'a str,
    /// A line under the title (runs, seed, distribution).
    pub subtitle: String,
    /// The unit of the metric's values.
    pub unit: Unit,
    /// The counts.
    pub histogram: &'a Histogram,
    /// The statistics of the same values.
    pub summary: &'a Summary,
    /// The metric at the nominal part values.
    pub nominal: Option<f64>,
}

const WIDTH: f64 = 780.0;
const HEIGHT: f64 = 470.0;
const LEFT: f64 = 70.0;
const RIGHT: f64 = 740.0;
const TOP: f64 = 78.0;
const BOTTOM: f64 = 370.0;
const FONT: &str = "DejaVu Sans, Helvetica, Arial, sans-serif";
const BAR: &str = "#4f7f9f";
const INK: &str = "#2b2b2b";
const GRID: &str = "#e4e4e4";

/// A file name for a metric label: letters, digits and `_` (`cutoff(adc, level -6 dB)`
/// gives `cutoff_adc_level_6_dB`).
pub fn file_stem(label: &str) -> String {
    let mut out = String::new();
    for c in label.chars() {
        if c.is_ascii_alphanumeric() {
            out.push(c);
        } else if !out.ends_with('_') && !out.is_empty() {
            out.push('_');
        }
    }
    let trimmed = out.trim_end_matches('_');
    if trimmed.is_empty() {
        "metric".to_string()
    } else {
        trimmed.to_string()
    }
}

/// The chart as an SVG document.
pub fn render(chart: &Chart) -> String {
    let h = chart.histogram;
    let (low, high) = value_range(h, chart.nominal);
    let x = |v: f64| LEFT + (v - low) / (high - low) * (RIGHT - LEFT);
    let peak = h.counts.iter().copied().max().unwrap_or(0).max(1);
    let count_step = nice_step(peak as f64, 5.0).max(1.0);
    // A little headroom so the tallest bar does not touch the top grid line.
    let count_top = (peak as f64 * 1.05 / count_step).ceil() * count_step;
    let y = |c: f64| BOTTOM - c / count_top * (BOTTOM - TOP);

    let mut out = String::new();
    let _ = writeln!(
        out,
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{WIDTH}\" height=\"{HEIGHT}\" viewBox=\"0 0 {WIDTH} {HEIGHT}\" font-family=\"{FONT}\" font-size=\"12\">"
    );
    let _ = writeln!(
        out,
        "<rect width=\"{WIDTH}\" height=\"{HEIGHT}\" fill=\"#ffffff\"/>"
    );
    let _ = writeln!(
        out,
        "<text class=\"title\" x=\"{LEFT}\" y=\"30\" font-size=\"17\" font-weight=\"bold\" fill=\"{INK}\">{}</text>",
        escape(chart.title)
    );
    let _ = writeln!(
        out,
        "<text class=\"subtitle\" x=\"{LEFT}\" y=\"50\" fill=\"#666\">{}</text>",
        escape(&chart.subtitle)
    );

    // Count axis with grid lines.
    out.push_str("<g class=\"count-axis\">\n");
    let mut c = 0.0;
    while c <= count_top + 0.5 * count_step {
        let py = y(c);
        let _ = writeln!(
            out,
            "<line x1=\"{LEFT}\" y1=\"{py:.1}\" x2=\"{RIGHT}\" y2=\"{py:.1}\" stroke=\"{GRID}\"/>\n<text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"end\" fill=\"#555\">{}</text>",
            LEFT - 8.0,
            py + 4.0,
            fixed(c, 0)
        );
        c += count_step;
    }
    let middle = 0.5 * (TOP + BOTTOM);
    let _ = writeln!(
        out,
        "<text x=\"20\" y=\"{middle:.1}\" text-anchor=\"middle\" fill=\"#444\" transform=\"rotate(-90 20 {middle:.1})\">runs per bin</text>\n</g>"
    );

    // Bars: equal bins, or one narrow bar when every value was the same.
    out.push_str("<g class=\"bars\">\n");
    let n = h.counts.len();
    for (i, &count) in h.counts.iter().enumerate() {
        let (from, to) = if h.high > h.low {
            h.bin_edges(i)
        } else {
            let half = 0.01 * (high - low);
            (h.low - half, h.low + half)
        };
        if h.high <= h.low && i > 0 {
            break;
        }
        let (x0, x1) = (x(from), x(to));
        let gap = if n > 1 && x1 - x0 > 3.0 { 1.0 } else { 0.0 };
        let _ = writeln!(
            out,
            "<rect class=\"bar\" data-count=\"{count}\" data-low=\"{}\" data-high=\"{}\" x=\"{:.2}\" y=\"{:.2}\" width=\"{:.2}\" height=\"{:.2}\" fill=\"{BAR}\"/>",
            crate::eng::machine(from),
            crate::eng::machine(to),
            x0 + 0.5 * gap,
            y(count as f64),
            (x1 - x0 - gap).max(0.5),
            BOTTOM - y(count as f64)
        );
    }
    out.push_str("</g>\n");

    // Value axis.
    out.push_str("<g class=\"value-axis\">\n");
    let _ = writeln!(
        out,
        "<line x1=\"{LEFT}\" y1=\"{BOTTOM}\" x2=\"{RIGHT}\" y2=\"{BOTTOM}\" stroke=\"{INK}\"/>"
    );
    let step = nice_step(high - low, 6.0);
    // Labels carry as many digits as the axis resolves (a narrow spread of a slope
    // needs more than the tables' fixed decimals).
    let magnitude = low.abs().max(high.abs());
    let fine = (high - low) / 200.0;
    let mut tick = (low / step).ceil() * step;
    while tick <= high + 1e-9 * step {
        let px = x(tick);
        let _ = writeln!(
            out,
            "<line x1=\"{px:.1}\" y1=\"{BOTTOM}\" x2=\"{px:.1}\" y2=\"{:.1}\" stroke=\"{INK}\"/>\n<text x=\"{px:.1}\" y=\"{:.1}\" text-anchor=\"middle\" fill=\"#555\">{}</text>",
            BOTTOM + 5.0,
            BOTTOM + 19.0,
            escape(&label(tick, chart.unit, step, magnitude))
        );
        tick += step;
    }
    let _ = writeln!(
        out,
        "<text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"middle\" fill=\"#444\">{}</text>\n</g>",
        0.5 * (LEFT + RIGHT),
        BOTTOM + 40.0,
        escape(chart.title)
    );

    // Markers: nominal solid, p1 and p99 dashed, labels above the plot.
    out.push_str("<g class=\"markers\">\n");
    let s = chart.summary;
    let mut markers = vec![("p01", "p1", s.p01, "4 3"), ("p99", "p99", s.p99, "4 3")];
    if let Some(nominal) = chart.nominal {
        markers.push(("nominal", "nominal", nominal, ""));
    }
    for (kind, name, value, dash) in markers {
        let px = x(value);
        let dash = if dash.is_empty() {
            String::new()
        } else {
            format!(" stroke-dasharray=\"{dash}\"")
        };
        let colour = if kind == "nominal" { "#b5452b" } else { "#555" };
        let anchor = if px > RIGHT - 60.0 {
            "end"
        } else if px < LEFT + 60.0 {
            "start"
        } else {
            "middle"
        };
        let label_y = if kind == "nominal" {
            TOP - 20.0
        } else {
            TOP - 6.0
        };
        let _ = writeln!(
            out,
            "<line class=\"marker\" data-kind=\"{kind}\" data-value=\"{}\" x1=\"{px:.2}\" y1=\"{TOP}\" x2=\"{px:.2}\" y2=\"{BOTTOM}\" stroke=\"{colour}\" stroke-width=\"1.5\"{dash}/>\n<text x=\"{px:.2}\" y=\"{label_y:.1}\" text-anchor=\"{anchor}\" font-size=\"11\" fill=\"{colour}\">{name} {}</text>",
            crate::eng::machine(value),
            escape(&label(value, chart.unit, fine, magnitude))
        );
    }
    out.push_str("</g>\n");

    // The statistics under the axis title.
    let sigma = s
        .std_dev
        .map_or_else(|| "n/a".to_string(), |v| label(v, chart.unit, v / 100.0, v));
    let show = |v: f64| escape(&label(v, chart.unit, fine, magnitude));
    let _ = writeln!(
        out,
        "<text class=\"stats\" x=\"{LEFT}\" y=\"{:.1}\" fill=\"#444\">n = {} runs · min {} · max {}</text>\n<text class=\"stats\" x=\"{LEFT}\" y=\"{:.1}\" fill=\"#444\">median {} · mean {} · σ {}</text>",
        HEIGHT - 32.0,
        s.count,
        show(s.min),
        show(s.max),
        HEIGHT - 14.0,
        show(s.p50),
        show(s.mean),
        escape(&sigma),
    );
    out.push_str("</svg>\n");
    out
}

/// `value` in its unit with enough digits to tell apart values `resolution` apart, for
/// values up to `magnitude`: fixed decimals for dB, degrees, slopes and plain numbers,
/// engineering notation with more significant digits for SI quantities.
fn label(value: f64, unit: Unit, resolution: f64, magnitude: f64) -> String {
    let resolution = if resolution.is_finite() && resolution > 0.0 {
        resolution
    } else {
        magnitude.abs().max(1e-300) * 1e-3
    };
    let fixed_decimals =
        |at_least: usize| ((-resolution.log10()).ceil().max(0.0) as usize).clamp(at_least, 9);
    match unit {
        Unit::Decibel => fixed_unit(value, fixed_decimals(2), "dB"),
        Unit::Degree => fixed_unit(value, fixed_decimals(1), "°"),
        Unit::DecibelPerDecade => fixed_unit(value, fixed_decimals(1), "dB/dec"),
        Unit::Dimensionless => fixed(value, fixed_decimals(3)),
        other => {
            let span =
                magnitude.abs().max(value.abs()).log10().floor() - resolution.log10().floor();
            let digits = ((span + 1.0).max(0.0) as usize).clamp(4, 9);
            eng_digits(value, other.symbol(), digits)
        }
    }
}

/// The span of the value axis: the histogram's range with 4 % room each side, taking
/// in the nominal value; a range around the value when every run gave the same one.
fn value_range(h: &Histogram, nominal: Option<f64>) -> (f64, f64) {
    let mut low = h.low;
    let mut high = h.high;
    if let Some(n) = nominal.filter(|n| n.is_finite()) {
        low = low.min(n);
        high = high.max(n);
    }
    let span = high - low;
    if span > 0.0 && span.is_finite() {
        (low - 0.04 * span, high + 0.04 * span)
    } else {
        let pad = if low == 0.0 { 1.0 } else { 0.01 * low.abs() };
        (low - pad, high + pad)
    }
}

/// A step of 1, 2 or 5 × 10ⁿ giving about `target` intervals over `span`.
fn nice_step(span: f64, target: f64) -> f64 {
    if !(span.is_finite() && span > 0.0) {
        return 1.0;
    }
    let raw = span / target;
    let power = 10f64.powf(raw.log10().floor());
    let fraction = raw / power;
    let nice = if fraction < 1.5 {
        1.0
    } else if fraction < 3.5 {
        2.0
    } else if fraction < 7.5 {
        5.0
    } else {
        10.0
    };
    nice * power
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    #[test]
    fn stems_are_plain_names() {
        assert_eq!(file_stem("cutoff(adc)"), "cutoff_adc");
        assert_eq!(
            file_stem("cutoff(out, level -6 dB)"),
            "cutoff_out_level_6_dB"
        );
        assert_eq!(file_stem("(("), "metric");
    }

    #[test]
    fn steps_are_one_two_five() {
        assert_eq!(nice_step(100.0, 5.0), 20.0);
        assert_eq!(nice_step(7.0, 6.0), 1.0);
        assert!((nice_step(0.3, 6.0) - 0.05).abs() < 1e-15);
        assert_eq!(nice_step(f64::NAN, 5.0), 1.0);
    }

    #[test]
    fn a_single_value_still_draws() {
        let h = Histogram {
            low: 5.0,
            high: 5.0,
            counts: vec![10, 0, 0],
        };
        let s = rolloff_tolerance::sampling::summarize(&[5.0; 10]).unwrap();
        let chart = Chart {
            title: "q(out)",
            subtitle: "10 runs".into(),
            unit: Unit::Dimensionless,
            histogram: &h,
            summary: &s,
            nominal: Some(5.0),
        };
        let svg = render(&chart);
        let doc = roxmltree::Document::parse(&svg).unwrap();
        let bars = doc
            .descendants()
            .filter(|n| n.attribute("class") == Some("bar"))
            .count();
        assert_eq!(bars, 1);
        assert!(!svg.contains("NaN") && !svg.contains("inf"));
    }
}
