//! `rolloff plot`: a Bode plot of every probe as SVG.

use rolloff_report::{Analysis, ProbeSource, analyze_probe};

use super::sweep::{gain_unit, is_impedance};
use super::{Outcome, Reported, Session};
use crate::args::PlotArgs;
use crate::input;
use crate::svg::{self, Marker, Plot, Point, Trace};

/// Runs the command.
///
/// # Errors
/// [`Reported`] when the file cannot be loaded or solved, or the SVG cannot be written.
pub fn run(args: &PlotArgs, session: &Session) -> Result<Outcome, Reported> {
    let loaded = session.load(&args.input.file)?;
    let mut analyzer = session.analyzer(&loaded)?;
    let freqs = session.frequencies(&loaded, &args.sweep)?;
    let circuit = loaded.circuit.clone();
    if circuit.probes.is_empty() {
        return Err(session.error(&format!(
            "{}: the file has no `probe` line, so there is nothing to plot",
            loaded.source.name
        )));
    }
    let mut traces = Vec::new();
    for (index, probe) in circuit.probes.iter().enumerate() {
        let fail = |e: &dyn std::fmt::Display| {
            session.error(&format!(
                "{}: probe `{}`: {e}",
                loaded.source.name, probe.name
            ))
        };
        let mut source = ProbeSource::new(&mut analyzer, probe.kind.clone());
        let analysis = Analysis::new(&mut source, &freqs).map_err(|e| fail(&e))?;
        let points = analysis
            .frequencies()
            .iter()
            .zip(analysis.gains_db())
            .zip(analysis.phases_deg())
            .map(|((&freq_hz, &gain_db), &phase_deg)| Point {
                freq_hz,
                gain_db,
                phase_deg,
            })
            .collect();
        drop(analysis);
        let impedance = is_impedance(&probe.kind);
        let mut trace = Trace {
            name: probe.name.clone(),
            gain_unit: if impedance {
                "dBΩ".to_string()
            } else {
                gain_unit(&circuit, &probe.kind).to_string()
            },
            points,
            ..Trace::default()
        };
        // The cutoffs of an impedance are not a filter's corners; only transfers get
        // the −3 dB level and its markers.
        if !impedance {
            let id = rolloff_netlist::ProbeId(index as u32);
            let summary = analyze_probe(&mut analyzer, id, &freqs).map_err(|e| fail(&e))?;
            trace.level_db = Some(summary.reference.gain_db + summary.level_db);
            trace.cutoffs = summary
                .cutoffs
                .iter()
                .zip(
                    summary
                        .phase_at_cutoffs_deg
                        .iter()
                        .chain(std::iter::repeat(&None)),
                )
                .map(|(c, phase)| Marker {
                    freq_hz: c.freq_hz,
                    phase_deg: *phase,
                })
                .collect();
        }
        traces.push(trace);
    }
    let plot = Plot {
        title: loaded.title(),
        traces,
    };
    input::write_output(&args.output, &svg::render(&plot)).map_err(|m| session.error(&m))?;
    Ok(Outcome::Pass)
}
