//! What the design commands (`fit`, `tolerance`, `sensitivity`) share: the solver-backed
//! model of a loaded circuit, the thread pool of `--jobs`, library errors as messages,
//! and the units their values are shown in.

use rolloff_netlist::{Circuit, CompileOptions, Metric, PartKind, Tolerance, Unit};
use rolloff_tolerance::{CircuitModel, ToleranceError};

use super::{Loaded, Reported, Session};

/// The circuit as a model the analyses vary, stamped once.
///
/// # Errors
/// [`Reported`] when the circuit cannot be solved (the error names the node or part).
pub fn model(session: &Session, loaded: &Loaded) -> Result<CircuitModel, Reported> {
    CircuitModel::new(&loaded.circuit)
        .map_err(|e| session.error(&format!("{}: {e}", loaded.source.name)))
}

/// A library error about the file, printed; exit 2.
pub fn failed(session: &Session, loaded: &Loaded, error: &ToleranceError) -> Reported {
    session.error(&format!("{}: {error}", loaded.source.name))
}

/// The rayon pool of `--jobs N` (`None`: rayon's own choice of threads, still a pool
/// of our making rather than the global one).
///
/// # Errors
/// [`Reported`] for `--jobs 0` or when the threads cannot be started.
pub fn pool(session: &Session, jobs: Option<usize>) -> Result<rayon::ThreadPool, Reported> {
    if jobs == Some(0) {
        return Err(session.error("`--jobs` must be at least 1"));
    }
    rayon::ThreadPoolBuilder::new()
        .num_threads(jobs.unwrap_or(0))
        .build()
        .map_err(|e| session.error(&format!("cannot start the worker threads: {e}")))
}

/// The unit a metric's values are in (as `check` shows them).
pub fn metric_unit(circuit: &Circuit, metric: &Metric) -> Unit {
    rolloff_report::measured_unit(circuit, metric)
}

/// The unit symbol of a passive part's value (`Ω`, `F`, `H`) from its keyword.
pub fn part_symbol(keyword: &str) -> &'static str {
    match keyword {
        "capacitor" => "F",
        "inductor" => "H",
        _ => "Ω",
    }
}

/// The unit symbol of the value of the part at `index` (empty for non-passives).
pub fn part_symbol_of(circuit: &Circuit, index: usize) -> &'static str {
    circuit.parts.get(index).map_or("", |p| match p.kind {
        PartKind::Resistor { .. } => "Ω",
        PartKind::Capacitor { .. } => "F",
        PartKind::Inductor { .. } => "H",
        _ => "",
    })
}

/// The CSV/JSON spelling of a part value unit (`ohm`, `F`, `H`).
pub fn unit_ascii(symbol: &str) -> &str {
    if symbol == "Ω" { "ohm" } else { symbol }
}

/// Reads a tolerance band as the language's `tol` option does (`5%`, `1 %`,
/// `-20% .. +80%`), by compiling it onto a one-part circuit.
///
/// # Errors
/// A message when the text is not a band.
pub fn parse_band(text: &str) -> Result<Tolerance, String> {
    let snippet = format!("resistor X (a, gnd) 1 tol {text}\n");
    let compiled = rolloff_netlist::compile(&snippet, &CompileOptions::default());
    let band = compiled
        .circuit
        .as_ref()
        .and_then(|c| c.parts.first())
        .and_then(|p| p.kind.passive_value())
        .and_then(|(_, tol)| tol);
    band.ok_or_else(|| {
        let why = compiled
            .diagnostics
            .iter()
            .find(|d| d.is_error())
            .map(|d| format!(": {}", d.message))
            .unwrap_or_default();
        format!("`{text}` is not a tolerance like `5%` or `-20% .. +80%`{why}")
    })
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    #[test]
    fn bands_read_like_the_language() {
        let b = parse_band("5%").unwrap();
        assert!((b.lower + 0.05).abs() < 1e-15 && (b.upper - 0.05).abs() < 1e-15);
        let b = parse_band("-20% .. +80%").unwrap();
        assert!((b.lower + 0.2).abs() < 1e-15 && (b.upper - 0.8).abs() < 1e-15);
        assert!(parse_band("five").is_err());
    }
}
