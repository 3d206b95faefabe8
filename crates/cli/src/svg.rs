//! The Bode plot as a hand-written SVG document: two stacked panels (gain in dB over
//! phase in degrees) on one logarithmic frequency axis.
//!
//! The renderer works on plain data ([`Plot`]), so it can be tested on closed-form
//! responses without a solver. Output is deterministic: fixed canvas, fixed number
//! formatting, elements in data order. Decades are major grid lines with labels, 2–9
//! are minor lines; each trace has a legend entry, its −3 dB level drawn as a dashed
//! line and each cutoff marked and labelled on both panels.

use std::fmt::Write as _;

use crate::eng;
use crate::junit::escape;

/// Everything the plot shows.
#[derive(Debug, Clone, Default)]
pub struct Plot {
    /// The heading (circuit title or file name).
    pub title: String,
    /// One trace per probe, in probe order.
    pub traces: Vec<Trace>,
}

/// One probe's response.
#[derive(Debug, Clone, Default)]
pub struct Trace {
    /// The probe's name, shown in the legend.
    pub name: String,
    /// The gain unit (`dB`, `dBΩ`, `dBS`); shown in the legend when not plain `dB`.
    pub gain_unit: String,
    /// The samples in increasing frequency; points at 0 Hz or not finite are skipped.
    pub points: Vec<Point>,
    /// The level the cutoffs are measured at (passband gain − 3.01 dB), if known.
    pub level_db: Option<f64>,
    /// The cutoffs found, each drawn as a vertical marker.
    pub cutoffs: Vec<Marker>,
}

/// One sample of a response.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Point {
    /// Frequency in Hz.
    pub freq_hz: f64,
    /// Gain in dB.
    pub gain_db: f64,
    /// Phase in degrees (unwrapped by the caller so the curve is continuous).
    pub phase_deg: f64,
}

/// A marked frequency (a cutoff).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Marker {
    /// Frequency in Hz.
    pub freq_hz: f64,
    /// The phase there in degrees, drawn as a dot on the phase trace when known.
    pub phase_deg: Option<f64>,
}

/// Trace colours: distinguishable for the common colour-vision deficiencies.
const PALETTE: [&str; 6] = [
    "#1f5fa6", "#c8403a", "#2b8a6e", "#d08a18", "#6f4a9c", "#4a4a4a",
];
const WIDTH: f64 = 960.0;
const HEIGHT: f64 = 720.0;
const LEFT: f64 = 78.0;
const RIGHT: f64 = 780.0;
const PLOT_TOP: f64 = 64.0;
const PLOT_BOTTOM: f64 = 660.0;
const PANEL_GAP: f64 = 30.0;
/// How far below the highest gain the gain axis reaches at most; deeper points are clipped.
const MAX_GAIN_SPAN_DB: f64 = 120.0;
const FONT: &str = "DejaVu Sans, Helvetica, Arial, sans-serif";

/// Renders the plot as a complete SVG document.
///
/// Traces share one gain panel per gain unit (a transfer in dB and an impedance in
/// dBΩ do not share an axis), above one phase panel.
pub fn render(plot: &Plot) -> String {
    let traces: Vec<Trace> = plot.traces.iter().map(cleaned).collect();
    let x_axis = LogAxis::fit(&traces, LEFT, RIGHT);
    let units = gain_units(&traces);
    let layout = layout(units.len());
    let mut out = String::new();
    header(&mut out, &plot.title);
    let gain_panels: Vec<Panel> = units
        .iter()
        .zip(&layout)
        .enumerate()
        .map(|(i, (unit, &(top, bottom)))| {
            let members: Vec<Trace> = traces
                .iter()
                .filter(|t| unit_of(t) == unit)
                .cloned()
                .collect();
            Panel {
                id: if i == 0 {
                    "gain".to_string()
                } else {
                    format!("gain{}", i + 1)
                },
                kind: "gain",
                top,
                bottom,
                y: gain_axis(&members, max_ticks(top, bottom)),
                title: gain_title(unit),
                x_labels: false,
            }
        })
        .collect();
    let (phase_top, phase_bottom) = layout[layout.len() - 1];
    let phase_panel = Panel {
        id: "phase".to_string(),
        kind: "phase",
        top: phase_top,
        bottom: phase_bottom,
        y: phase_axis(&traces, max_ticks(phase_top, phase_bottom)),
        title: "phase [°]".to_string(),
        x_labels: true,
    };
    for panel in gain_panels.iter().chain([&phase_panel]) {
        panel.frame(&mut out, &x_axis);
    }
    let panel_of = |trace: &Trace| {
        let i = units.iter().position(|u| u == unit_of(trace)).unwrap_or(0);
        &gain_panels[i]
    };
    for (index, trace) in traces.iter().enumerate() {
        let colour = PALETTE[index % PALETTE.len()];
        panel_of(trace).trace(&mut out, &x_axis, trace, colour, |p| p.gain_db);
        phase_panel.trace(&mut out, &x_axis, trace, colour, |p| p.phase_deg);
    }
    for (index, trace) in traces.iter().enumerate() {
        let colour = PALETTE[index % PALETTE.len()];
        markers(
            &mut out,
            &x_axis,
            panel_of(trace),
            &phase_panel,
            trace,
            colour,
            index,
        );
    }
    legend(&mut out, &traces);
    let _ = writeln!(
        out,
        "<text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"middle\" font-size=\"13\" fill=\"#333\">frequency</text>",
        f64::midpoint(LEFT, RIGHT),
        PLOT_BOTTOM + 44.0
    );
    out.push_str("</svg>\n");
    out
}

/// The vertical extent of each panel: the gain panels (one per unit) then the phase
/// panel, which gets a little less height than a lone gain panel.
fn layout(gain_panels: usize) -> Vec<(f64, f64)> {
    let gain_panels = gain_panels.max(1);
    let weights: Vec<f64> = std::iter::repeat_n(1.2, gain_panels).chain([1.0]).collect();
    let total: f64 = weights.iter().sum();
    let usable = PLOT_BOTTOM - PLOT_TOP - PANEL_GAP * (weights.len() - 1) as f64;
    let mut top = PLOT_TOP;
    weights
        .iter()
        .map(|w| {
            let bottom = top + usable * w / total;
            let panel = (top, bottom);
            top = bottom + PANEL_GAP;
            panel
        })
        .collect()
}

/// How many grid intervals fit a panel without crowding its labels.
fn max_ticks(top: f64, bottom: f64) -> f64 {
    ((bottom - top) / 30.0).floor().clamp(3.0, 10.0)
}

fn unit_of(trace: &Trace) -> &str {
    if trace.gain_unit.is_empty() {
        "dB"
    } else {
        trace.gain_unit.as_str()
    }
}

/// The distinct gain units, in the order of the traces.
fn gain_units(traces: &[Trace]) -> Vec<String> {
    let mut units: Vec<String> = Vec::new();
    for trace in traces {
        let unit = unit_of(trace).to_string();
        if !units.contains(&unit) {
            units.push(unit);
        }
    }
    if units.is_empty() {
        units.push("dB".to_string());
    }
    units
}

fn gain_title(unit: &str) -> String {
    if unit == "dBΩ" {
        format!("magnitude [{unit}]")
    } else {
        format!("gain [{unit}]")
    }
}

/// Keeps only the points a log plot can show.
fn cleaned(trace: &Trace) -> Trace {
    let mut trace = trace.clone();
    trace.points.retain(|p| {
        p.freq_hz > 0.0 && p.freq_hz.is_finite() && p.gain_db.is_finite() && p.phase_deg.is_finite()
    });
    trace
        .cutoffs
        .retain(|m| m.freq_hz > 0.0 && m.freq_hz.is_finite());
    if trace.level_db.is_some_and(|l| !l.is_finite()) {
        trace.level_db = None;
    }
    trace
}

fn header(out: &mut String, title: &str) {
    let _ = writeln!(
        out,
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{WIDTH}\" height=\"{HEIGHT}\" viewBox=\"0 0 {WIDTH} {HEIGHT}\" font-family=\"{FONT}\" font-size=\"12\">"
    );
    let _ = writeln!(
        out,
        "<rect x=\"0\" y=\"0\" width=\"{WIDTH}\" height=\"{HEIGHT}\" fill=\"#ffffff\"/>"
    );
    let _ = writeln!(
        out,
        "<text x=\"{LEFT}\" y=\"36\" font-size=\"17\" font-weight=\"bold\" fill=\"#222\">{}</text>",
        escape(title)
    );
}

/// A logarithmic frequency axis mapped onto `px0..px1`.
#[derive(Debug, Clone, Copy)]
struct LogAxis {
    lo: f64,
    hi: f64,
    px0: f64,
    px1: f64,
}

impl LogAxis {
    /// Spans every trace's frequencies, widened outwards to the nearest `m·10^k` ticks.
    fn fit(traces: &[Trace], px0: f64, px1: f64) -> Self {
        let freqs = traces
            .iter()
            .flat_map(|t| t.points.iter().map(|p| p.freq_hz));
        let (mut lo, mut hi) = min_max(freqs).unwrap_or((10.0, 100_000.0));
        lo = tick_at_or_below(lo);
        hi = tick_at_or_above(hi);
        if hi <= lo * (1.0 + 1e-9) {
            hi = tick_at_or_above(lo * 1.5);
        }
        Self { lo, hi, px0, px1 }
    }

    fn map(&self, freq: f64) -> f64 {
        let t = (freq / self.lo).log10() / (self.hi / self.lo).log10();
        self.px0 + t * (self.px1 - self.px0)
    }

    fn contains(&self, freq: f64) -> bool {
        freq >= self.lo * (1.0 - 1e-9) && freq <= self.hi * (1.0 + 1e-9)
    }

    /// Every `m·10^k` in range, with whether it is a decade.
    fn ticks(&self) -> Vec<(f64, bool)> {
        let first = self.lo.log10().floor() as i32;
        let last = self.hi.log10().ceil() as i32;
        let mut ticks = Vec::new();
        for exponent in first..=last {
            for mantissa in 1..=9 {
                let freq = f64::from(mantissa) * 10f64.powi(exponent);
                if self.contains(freq) {
                    ticks.push((freq, mantissa == 1));
                }
            }
        }
        ticks
    }
}

/// The largest `m·10^k` (m in 1..=9) not above `x`.
fn tick_at_or_below(x: f64) -> f64 {
    let decade = 10f64.powi(x.log10().floor() as i32);
    let mantissa = (x / decade * (1.0 + 1e-9)).floor().clamp(1.0, 9.0);
    mantissa * decade
}

/// The smallest `m·10^k` (m in 1..=10) not below `x`.
fn tick_at_or_above(x: f64) -> f64 {
    let decade = 10f64.powi(x.log10().floor() as i32);
    let mantissa = (x / decade * (1.0 - 1e-9)).ceil().clamp(1.0, 10.0);
    mantissa * decade
}

fn min_max(values: impl Iterator<Item = f64>) -> Option<(f64, f64)> {
    values.fold(None, |acc, v| match acc {
        None => Some((v, v)),
        Some((lo, hi)) => Some((lo.min(v), hi.max(v))),
    })
}

/// A linear value axis with grid lines every `step`.
#[derive(Debug, Clone, Copy)]
struct LinAxis {
    lo: f64,
    hi: f64,
    step: f64,
}

impl LinAxis {
    /// The smallest range with a step from `steps` that covers `lo..hi` in at most
    /// `max_ticks` intervals.
    fn nice(lo: f64, hi: f64, steps: &[f64], max_ticks: f64) -> Self {
        let (lo, hi) = if hi - lo < 1e-9 {
            (lo - 1.0, hi + 1.0)
        } else {
            (lo, hi)
        };
        let mut chosen = None;
        for &step in steps {
            let a = (lo / step).floor() * step;
            let b = (hi / step).ceil() * step;
            if (b - a) / step <= max_ticks {
                chosen = Some(Self { lo: a, hi: b, step });
                break;
            }
        }
        chosen.unwrap_or_else(|| {
            let step = steps.last().copied().unwrap_or(1.0);
            let mut step = step;
            while (hi - lo) / step > max_ticks {
                step *= 10.0;
            }
            Self {
                lo: (lo / step).floor() * step,
                hi: (hi / step).ceil() * step,
                step,
            }
        })
    }

    fn map(&self, value: f64, top: f64, bottom: f64) -> f64 {
        bottom - (value - self.lo) / (self.hi - self.lo) * (bottom - top)
    }

    fn ticks(&self) -> Vec<f64> {
        let n = ((self.hi - self.lo) / self.step).round() as i64;
        (0..=n).map(|i| self.lo + i as f64 * self.step).collect()
    }
}

fn gain_axis(traces: &[Trace], max_ticks: f64) -> LinAxis {
    let values = traces
        .iter()
        .flat_map(|t| t.points.iter().map(|p| p.gain_db).chain(t.level_db));
    let (lo, hi) = min_max(values).unwrap_or((-40.0, 0.0));
    let lo = lo.max(hi - MAX_GAIN_SPAN_DB);
    // A little headroom so a flat passband does not run along the frame.
    let pad = 0.04 * (hi - lo).max(1.0);
    let (lo, hi) = (lo - pad, hi + pad);
    LinAxis::nice(lo, hi, &[1.0, 2.0, 5.0, 10.0, 20.0, 50.0, 100.0], max_ticks)
}

fn phase_axis(traces: &[Trace], max_ticks: f64) -> LinAxis {
    let values = traces
        .iter()
        .flat_map(|t| t.points.iter().map(|p| p.phase_deg));
    let (lo, hi) = min_max(values).unwrap_or((-90.0, 0.0));
    LinAxis::nice(
        lo,
        hi,
        &[5.0, 10.0, 15.0, 30.0, 45.0, 90.0, 180.0, 360.0],
        max_ticks.min(8.0),
    )
}

/// One of the two stacked panels.
struct Panel {
    id: String,
    /// `gain` or `phase`, written on each trace as `data-panel`.
    kind: &'static str,
    top: f64,
    bottom: f64,
    y: LinAxis,
    title: String,
    x_labels: bool,
}

impl Panel {
    fn y_px(&self, value: f64) -> f64 {
        self.y.map(value, self.top, self.bottom)
    }

    /// Background, grid, tick labels, axis title and the clip path of the panel.
    fn frame(&self, out: &mut String, x: &LogAxis) {
        let _ = writeln!(
            out,
            "<g class=\"panel\" id=\"panel-{}\">\n<clipPath id=\"clip-{}\"><rect x=\"{LEFT}\" y=\"{:.1}\" width=\"{:.1}\" height=\"{:.1}\"/></clipPath>",
            self.id,
            self.id,
            self.top,
            RIGHT - LEFT,
            self.bottom - self.top
        );
        let _ = writeln!(
            out,
            "<rect x=\"{LEFT}\" y=\"{:.1}\" width=\"{:.1}\" height=\"{:.1}\" fill=\"#fbfbfb\"/>",
            self.top,
            RIGHT - LEFT,
            self.bottom - self.top
        );
        self.x_grid(out, x);
        self.y_grid(out);
        let _ = writeln!(
            out,
            "<rect x=\"{LEFT}\" y=\"{:.1}\" width=\"{:.1}\" height=\"{:.1}\" fill=\"none\" stroke=\"#8a8a8a\" stroke-width=\"1\"/>",
            self.top,
            RIGHT - LEFT,
            self.bottom - self.top
        );
        let middle = f64::midpoint(self.top, self.bottom);
        let _ = writeln!(
            out,
            "<text x=\"22\" y=\"{middle:.1}\" text-anchor=\"middle\" font-size=\"13\" fill=\"#333\" transform=\"rotate(-90 22 {middle:.1})\">{}</text>\n</g>",
            escape(&self.title)
        );
    }

    fn x_grid(&self, out: &mut String, x: &LogAxis) {
        let ticks = x.ticks();
        let decades = ticks.iter().filter(|(_, major)| *major).count();
        for &(freq, major) in &ticks {
            let px = x.map(freq);
            let (colour, width) = if major {
                ("#c4c4c4", 1.0)
            } else {
                ("#e8e8e8", 0.8)
            };
            let _ = writeln!(
                out,
                "<line x1=\"{px:.2}\" y1=\"{:.1}\" x2=\"{px:.2}\" y2=\"{:.1}\" stroke=\"{colour}\" stroke-width=\"{width}\"/>",
                self.top, self.bottom
            );
            let mantissa = (freq / 10f64.powi(freq.log10().floor() as i32)).round();
            // With fewer than two decades in view, label 2 and 5 too so the scale reads.
            let labelled = major || (decades < 2 && (mantissa == 2.0 || mantissa == 5.0));
            if self.x_labels && labelled {
                let _ = writeln!(
                    out,
                    "<text x=\"{px:.2}\" y=\"{:.1}\" text-anchor=\"middle\" fill=\"#444\">{}</text>",
                    self.bottom + 18.0,
                    frequency_label(freq)
                );
            }
        }
    }

    fn y_grid(&self, out: &mut String) {
        for value in self.y.ticks() {
            let py = self.y_px(value);
            let _ = writeln!(
                out,
                "<line x1=\"{LEFT}\" y1=\"{py:.2}\" x2=\"{RIGHT}\" y2=\"{py:.2}\" stroke=\"#dcdcdc\" stroke-width=\"1\"/>"
            );
            let _ = writeln!(
                out,
                "<text x=\"{:.1}\" y=\"{:.2}\" text-anchor=\"end\" fill=\"#444\">{}</text>",
                LEFT - 8.0,
                py + 4.0,
                value_label(value)
            );
        }
    }

    /// The trace as polylines, broken where points were skipped.
    fn trace(
        &self,
        out: &mut String,
        x: &LogAxis,
        trace: &Trace,
        colour: &str,
        value: impl Fn(&Point) -> f64,
    ) {
        if trace.points.is_empty() {
            return;
        }
        let mut points = String::new();
        for (i, point) in trace.points.iter().enumerate() {
            if i > 0 {
                points.push(' ');
            }
            let _ = write!(
                points,
                "{:.2},{:.2}",
                x.map(point.freq_hz),
                self.y_px(value(point)).clamp(-10_000.0, 10_000.0)
            );
        }
        let _ = writeln!(
            out,
            "<polyline class=\"trace\" data-probe=\"{}\" data-panel=\"{}\" clip-path=\"url(#clip-{})\" fill=\"none\" stroke=\"{colour}\" stroke-width=\"2\" stroke-linejoin=\"round\" stroke-linecap=\"round\" points=\"{points}\"/>",
            escape(&trace.name),
            self.kind,
            self.id
        );
    }
}

/// The −3 dB level and the cutoffs of one trace.
fn markers(
    out: &mut String,
    x: &LogAxis,
    gain: &Panel,
    phase: &Panel,
    trace: &Trace,
    colour: &str,
    index: usize,
) {
    let name = escape(&trace.name);
    if let Some(level) = trace.level_db
        && level >= gain.y.lo
        && level <= gain.y.hi
    {
        let py = gain.y_px(level);
        let _ = writeln!(
            out,
            "<line class=\"level\" data-probe=\"{name}\" x1=\"{LEFT}\" y1=\"{py:.2}\" x2=\"{RIGHT}\" y2=\"{py:.2}\" stroke=\"{colour}\" stroke-width=\"1\" stroke-dasharray=\"6 4\" opacity=\"0.8\"/>"
        );
        let _ = writeln!(
            out,
            "<text class=\"level-label\" x=\"{:.1}\" y=\"{:.2}\" text-anchor=\"end\" fill=\"{colour}\" {HALO}>{name} −3 dB</text>",
            RIGHT - 6.0,
            py - 5.0
        );
    }
    for (k, cutoff) in trace.cutoffs.iter().enumerate() {
        if !x.contains(cutoff.freq_hz) {
            continue;
        }
        let px = x.map(cutoff.freq_hz);
        for panel in [gain, phase] {
            let _ = writeln!(
                out,
                "<line class=\"cutoff\" data-probe=\"{name}\" x1=\"{px:.2}\" y1=\"{:.1}\" x2=\"{px:.2}\" y2=\"{:.1}\" stroke=\"{colour}\" stroke-width=\"1\" stroke-dasharray=\"3 3\"/>",
                panel.top, panel.bottom
            );
        }
        if let Some(level) = trace
            .level_db
            .filter(|l| *l >= gain.y.lo && *l <= gain.y.hi)
        {
            dot(out, px, gain.y_px(level), colour);
        }
        if let Some(phase_deg) = cutoff
            .phase_deg
            .filter(|p| *p >= phase.y.lo && *p <= phase.y.hi)
        {
            dot(out, px, phase.y_px(phase_deg), colour);
        }
        // Labels stack downwards from the panel top so several cutoffs stay readable;
        // a cutoff in the right part of the plot is labelled on its left.
        let row = (index * 2 + k) as f64;
        let (anchor, dx) = if px > RIGHT - 150.0 {
            ("end", -5.0)
        } else {
            ("start", 5.0)
        };
        let _ = writeln!(
            out,
            "<text class=\"cutoff-label\" x=\"{:.2}\" y=\"{:.1}\" text-anchor=\"{anchor}\" fill=\"{colour}\" {HALO}>{}</text>",
            px + dx,
            gain.top + 16.0 + 15.0 * row,
            eng::eng(cutoff.freq_hz, "Hz")
        );
    }
}

/// A white outline behind text that sits on the grid or a trace.
const HALO: &str =
    "stroke=\"#ffffff\" stroke-width=\"3\" stroke-linejoin=\"round\" paint-order=\"stroke\"";

fn dot(out: &mut String, px: f64, py: f64, colour: &str) {
    let _ = writeln!(
        out,
        "<circle class=\"cutoff-dot\" cx=\"{px:.2}\" cy=\"{py:.2}\" r=\"3.5\" fill=\"#ffffff\" stroke=\"{colour}\" stroke-width=\"2\"/>"
    );
}

fn legend(out: &mut String, traces: &[Trace]) {
    let x = RIGHT + 22.0;
    let _ = writeln!(out, "<g class=\"legend\">");
    for (index, trace) in traces.iter().enumerate() {
        let colour = PALETTE[index % PALETTE.len()];
        let y = PLOT_TOP + 10.0 + 22.0 * index as f64;
        let unit = if trace.gain_unit.is_empty() || trace.gain_unit == "dB" {
            String::new()
        } else {
            format!(" ({})", trace.gain_unit)
        };
        let _ = writeln!(
            out,
            "<line x1=\"{x:.1}\" y1=\"{y:.1}\" x2=\"{:.1}\" y2=\"{y:.1}\" stroke=\"{colour}\" stroke-width=\"3\" stroke-linecap=\"round\"/>\n<text class=\"legend-entry\" x=\"{:.1}\" y=\"{:.1}\" fill=\"#222\">{}{}</text>",
            x + 24.0,
            x + 32.0,
            y + 4.0,
            escape(&trace.name),
            escape(&unit)
        );
    }
    let _ = writeln!(out, "</g>");
}

/// `1 kHz`, `100 mHz`, `2 MHz`: a tick value without trailing zeros.
fn frequency_label(freq: f64) -> String {
    let text = eng::eng(freq, "Hz");
    match text.split_once(' ') {
        Some((number, unit)) if number.contains('.') => {
            let number = number.trim_end_matches('0').trim_end_matches('.');
            format!("{number} {unit}")
        }
        _ => text,
    }
}

/// A y tick value: integers as integers, with a typographic minus.
fn value_label(value: f64) -> String {
    let text = if (value - value.round()).abs() < 1e-9 {
        eng::fixed(value.round(), 0)
    } else {
        eng::fixed(value, 1)
    };
    text.replace('-', "−")
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;
    use std::f64::consts::PI;

    /// A first-order low-pass `1/(1 + j f/fc)`: |H| in dB and phase `−atan(f/fc)`
    /// (the standard single-pole response, any circuit-theory text).
    pub(crate) fn first_order_low_pass(name: &str, fc: f64, gain_db: f64) -> Trace {
        let points = (0..=120)
            .map(|i| {
                let f = 10f64.powf(f64::from(i) / 20.0);
                let ratio = f / fc;
                Point {
                    freq_hz: f,
                    gain_db: gain_db - 10.0 * (1.0 + ratio * ratio).log10(),
                    phase_deg: -ratio.atan() * 180.0 / PI,
                }
            })
            .collect();
        Trace {
            name: name.into(),
            gain_unit: "dB".into(),
            points,
            level_db: Some(gain_db - 3.0103),
            cutoffs: vec![Marker {
                freq_hz: fc,
                phase_deg: Some(-45.0),
            }],
        }
    }

    fn sample() -> Plot {
        Plot {
            title: "two RC corners & a gain".into(),
            traces: vec![
                first_order_low_pass("out", 1.0 / (2.0 * PI * 10e3 * 10e-9), 0.0),
                first_order_low_pass("buf", 159.15, 20.0),
            ],
        }
    }

    #[test]
    fn svg_parses_with_two_traces_per_probe_and_a_legend() {
        let text = render(&sample());
        let doc = roxmltree::Document::parse(&text).unwrap();
        let traces: Vec<_> = doc
            .descendants()
            .filter(|n| n.has_tag_name("polyline"))
            .collect();
        assert_eq!(traces.len(), 4);
        assert_eq!(traces[0].attribute("data-probe"), Some("out"));
        assert_eq!(traces[1].attribute("data-panel"), Some("phase"));
        let legend: Vec<_> = doc
            .descendants()
            .filter(|n| n.attribute("class") == Some("legend-entry"))
            .map(|n| n.text().unwrap().to_string())
            .collect();
        assert_eq!(legend, ["out", "buf"]);
        let cutoff_labels: Vec<_> = doc
            .descendants()
            .filter(|n| n.attribute("class") == Some("cutoff-label"))
            .map(|n| n.text().unwrap().to_string())
            .collect();
        assert_eq!(cutoff_labels, ["1.592 kHz", "159.2 Hz"]);
        assert_eq!(
            doc.descendants()
                .filter(|n| n.attribute("class") == Some("level"))
                .count(),
            2
        );
    }

    #[test]
    fn decade_labels_use_si_prefixes() {
        let text = render(&sample());
        for label in [
            "1 Hz", "10 Hz", "100 Hz", "1 kHz", "10 kHz", "100 kHz", "1 MHz",
        ] {
            assert!(
                text.contains(&format!(">{label}</text>")),
                "missing {label}"
            );
        }
    }

    #[test]
    fn the_cutoff_sits_where_the_log_axis_puts_it() {
        let axis = LogAxis {
            lo: 1.0,
            hi: 1e6,
            px0: 0.0,
            px1: 600.0,
        };
        assert!((axis.map(1e3) - 300.0).abs() < 1e-9);
        assert!((axis.map(10f64.powf(2.5)) - 250.0).abs() < 1e-9);
        let majors = axis.ticks().iter().filter(|t| t.1).count();
        assert_eq!(majors, 7);
        assert_eq!(axis.ticks().len(), 6 * 9 + 1);
    }

    #[test]
    fn axis_ends_snap_to_ticks() {
        assert_eq!(tick_at_or_below(15.9), 10.0);
        assert_eq!(tick_at_or_below(0.07), 0.07);
        assert_eq!(tick_at_or_above(15.9), 20.0);
        assert_eq!(tick_at_or_above(1e5), 1e5);
        assert_eq!(tick_at_or_above(95_000.0), 1e5);
    }

    #[test]
    fn output_is_deterministic_and_never_shows_nan() {
        let mut plot = sample();
        plot.traces[0].points.push(Point {
            freq_hz: f64::NAN,
            gain_db: 0.0,
            phase_deg: 0.0,
        });
        plot.traces[0].points.insert(
            0,
            Point {
                freq_hz: 0.0,
                gain_db: 0.0,
                phase_deg: 0.0,
            },
        );
        let text = render(&plot);
        assert_eq!(text, render(&plot));
        assert!(!text.contains("NaN") && !text.contains("inf"));
    }

    #[test]
    fn an_impedance_gets_its_own_panel() {
        let mut plot = sample();
        plot.traces[1].gain_unit = "dBΩ".into();
        let text = render(&plot);
        let doc = roxmltree::Document::parse(&text).unwrap();
        let panels: Vec<_> = doc
            .descendants()
            .filter(|n| n.attribute("class") == Some("panel"))
            .map(|n| n.attribute("id").unwrap().to_string())
            .collect();
        assert_eq!(panels, ["panel-gain", "panel-gain2", "panel-phase"]);
        assert!(text.contains(">magnitude [dBΩ]</text>"));
        let buf = doc
            .descendants()
            .find(|n| n.attribute("data-probe") == Some("buf"))
            .unwrap();
        assert_eq!(buf.attribute("clip-path"), Some("url(#clip-gain2)"));
    }

    #[test]
    fn an_empty_plot_still_renders() {
        let text = render(&Plot::default());
        roxmltree::Document::parse(&text).unwrap();
    }

    #[test]
    fn nice_axes_cover_the_data() {
        let axis = LinAxis::nice(-63.2, 20.8, &[1.0, 2.0, 5.0, 10.0, 20.0], 10.0);
        assert_eq!((axis.lo, axis.hi, axis.step), (-70.0, 30.0, 10.0));
        let phase = LinAxis::nice(-90.0, 0.0, &[5.0, 10.0, 15.0, 30.0, 45.0], 8.0);
        assert_eq!((phase.lo, phase.hi, phase.step), (-90.0, 0.0, 15.0));
    }
}
