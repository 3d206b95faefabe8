//! End-to-end tests of the design commands (`values`, `fit`, `tolerance`,
//! `sensitivity`): the built binary is run, every format parsed back (JSON with
//! serde_json, CSV with the csv crate, the SVG histograms as XML with roxmltree), the
//! exit codes 0/1/2 checked, and Monte Carlo shown reproducible by seed whatever the
//! thread count.
//!
//! The references are outside the project: the IEC 60063 E12/E24 tables (from memory)
//! and IEC 60062 codes, the first-order RC corner `fc = 1/(2πRC)` (a published formula)
//! with its power-law sensitivities (−1 to R and to C), and Thévenin's theorem for the
//! loaded divider of the fit example.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use common::{assert_exit, repo_root, run, run_with, stderr, stdout};

use serde_json::Value;

const TAU: f64 = std::f64::consts::TAU;
const RC: &str = "crates/cli/tests/fixtures/tolerance_rc.rol";
const FIT: &str = "fixtures/examples/fit_pickup_lowpass.rol";

#[track_caller]
fn json(args: &[&str]) -> Value {
    let output = run(args);
    assert_exit(&output, 0);
    let text = stdout(&output);
    assert!(!text.contains("NaN") && !text.contains("inf"), "{text}");
    serde_json::from_str(&text).unwrap()
}

#[track_caller]
fn csv_rows(args: &[&str]) -> (Vec<String>, Vec<Vec<String>>) {
    let output = run(args);
    assert_exit(&output, 0);
    let text = stdout(&output);
    let mut reader = csv::Reader::from_reader(text.as_bytes());
    let header = reader.headers().unwrap().iter().map(String::from).collect();
    let rows = reader
        .records()
        .map(|r| r.unwrap().iter().map(String::from).collect())
        .collect();
    (header, rows)
}

#[track_caller]
fn close(actual: f64, expected: f64, relative: f64) {
    assert!(
        (actual - expected).abs() <= relative * expected.abs(),
        "{actual} is not within {relative:e} of {expected}"
    );
}

fn f(v: &Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

// ---------------------------------------------------------------- values

#[test]
fn values_gives_the_e24_neighbours_with_codes() {
    let v = json(&["values", "15.92n", "--format", "json"]);
    assert_eq!(v["series"], "E24");
    assert_eq!(v["unit"], "");
    close(f(&v["value"]), 15.92e-9, 1e-15);
    // IEC 60063 E24 (from memory): … 13, 15, 16, 18 …; 15.92 lies nearer 16 on a log scale.
    let standard = v["standard"].as_array().unwrap();
    let roles: Vec<&str> = standard
        .iter()
        .map(|s| s["role"].as_str().unwrap())
        .collect();
    assert_eq!(roles, ["next_down", "nearest", "next_up"]);
    let codes: Vec<&str> = standard
        .iter()
        .map(|s| s["code"].as_str().unwrap())
        .collect();
    assert_eq!(codes, ["15n", "16n", "16n"]);
    close(f(&standard[0]["value"]), 15e-9, 1e-15);
    close(f(&standard[0]["relative_error"]), 15.0 / 15.92 - 1.0, 1e-9);
    assert!(v["combinations"].as_array().unwrap().is_empty());
}

#[test]
fn values_accepts_the_languages_literals_and_units() {
    let with_unit = json(&["values", "15.92 nF", "--format", "json", "--combine"]);
    assert_eq!(with_unit["unit"], "F");
    let combos = with_unit["combinations"].as_array().unwrap();
    assert_eq!(combos.len(), 2);
    // For capacitors a sum is a parallel connection (common practice).
    assert_eq!(combos[0]["joining"], "sum");
    assert_eq!(combos[0]["connection"], "parallel");
    assert_eq!(combos[1]["connection"], "series");
    for c in combos {
        // Each pair beats the single nearest value (+0.5 %).
        assert!(f(&c["relative_error"]).abs() < 0.005, "{c}");
        let (a, b) = (f(&c["a"]), f(&c["b"]));
        let combined = if c["joining"] == "sum" {
            a + b
        } else {
            a * b / (a + b)
        };
        close(f(&c["value"]), combined, 1e-12);
    }
    let code = json(&["values", "4k7", "--series", "E12", "--format", "json"]);
    close(f(&code["value"]), 4700.0, 1e-15);
    assert_eq!(code["standard"][1]["code"], "4k7");
    assert_eq!(f(&code["standard"][1]["relative_error"]), 0.0);
    let ohms = json(&["values", "1.5 kΩ", "--format", "json"]);
    assert_eq!(ohms["unit"], "ohm");
}

#[test]
fn values_e12_pairs_for_7k5_in_every_format() {
    // 7.5 kΩ is no E12 value (E12 from memory: 6.8, 8.2); 15 k ‖ 15 k makes it exactly.
    let output = run(&["values", "7.5k", "--series", "E12", "--combine"]);
    assert_exit(&output, 0);
    let table = stdout(&output);
    assert!(table.contains("6k8") && table.contains("8k2"), "{table}");
    assert!(table.contains("15k 15k"), "{table}");
    let (header, rows) = csv_rows(&[
        "values",
        "7.5k",
        "--series",
        "E12",
        "--combine",
        "--format",
        "csv",
    ]);
    assert_eq!(header[0], "kind");
    assert_eq!(header.last().unwrap(), "relative_error");
    assert_eq!(rows.len(), 5);
    let reciprocal = rows.iter().find(|r| r[0] == "reciprocal").unwrap();
    assert_eq!(reciprocal[5], "15k");
    assert_eq!(reciprocal[7], "15k");
    assert!(reciprocal[9].parse::<f64>().unwrap().abs() < 1e-12);
}

#[test]
fn values_input_errors_exit_2() {
    let output = run(&["values", "4K7"]);
    assert_exit(&output, 2);
    let message = stderr(&output);
    assert!(
        message.contains("<command line>") && message.contains('^'),
        "{message}"
    );
    assert_exit(&run(&["values", "5 Hz"]), 2);
    assert_exit(&run(&["values", "-5"]), 2);
    assert_exit(&run(&["values", "1k", "--series", "E7"]), 2);
}

// ---------------------------------------------------------------- fit

#[test]
fn fit_solves_the_loaded_divider() {
    let v = json(&["fit", FIT, "--format", "json"]);
    let part = &v["parts"][0];
    assert_eq!(part["name"], "RS");
    assert_eq!(part["kind"], "resistor");
    assert_eq!(part["unit"], "ohm");
    // Thévenin: the capacitor sees (1 kΩ + RS) ‖ 47 kΩ, and fc = 1/(2π·R_th·C) = 2 kHz.
    let r_th = 1.0 / (TAU * 2e3 * 10e-9);
    let rs = 1.0 / (1.0 / r_th - 1.0 / 47e3) - 1e3;
    // The cutoff is taken against the gain at 10 Hz, 1e-5 below DC: allow 1e-4.
    close(f(&part["exact"]), rs, 1e-4);
    close(f(&part["achieved"]), 2e3, 1e-9);
    let standard = part["standard"].as_array().unwrap();
    // RS ≈ 8.58 kΩ lies between the E24 values 8.2 k and 9.1 k, nearer 8.2 k (log scale).
    assert_eq!(standard[0]["code"], "8k2");
    assert_eq!(standard[0]["nearest"], true);
    assert_eq!(standard[1]["code"], "9k1");
    // A smaller RS raises the cutoff.
    assert!(f(&standard[0]["metric_value"]) > 2e3);
    assert!(f(&standard[1]["metric_value"]) < 2e3);
    let pair = &part["best_pair"];
    let single_best = standard
        .iter()
        .map(|s| f(&s["relative_error"]).abs())
        .fold(f64::INFINITY, f64::min);
    assert!(f(&pair["relative_error"]).abs() < single_best, "{pair}");
}

#[test]
fn fit_table_and_csv() {
    let output = run(&["fit", FIT, "--series", "E12"]);
    assert_exit(&output, 0);
    let table = stdout(&output);
    assert!(
        table.contains("RS (resistor)") && table.contains("E12"),
        "{table}"
    );
    let (header, rows) = csv_rows(&["fit", FIT, "--format", "csv"]);
    assert_eq!(
        header,
        [
            "part",
            "candidate",
            "value",
            "unit",
            "code",
            "metric",
            "metric_value",
            "metric_unit",
            "relative_error"
        ]
    );
    assert_eq!(rows[0][1], "exact");
    assert!(
        rows.iter()
            .any(|r| r[1] == "below_nearest" && r[4] == "8k2")
    );
    for row in &rows {
        row[2].parse::<f64>().unwrap();
    }
}

#[test]
fn fit_without_a_question_mark_is_an_input_error() {
    let output = run(&["fit", RC]);
    assert_exit(&output, 2);
    assert!(
        stderr(&output).contains("no part to fit"),
        "{}",
        stderr(&output)
    );
}

// ---------------------------------------------------------------- tolerance

fn tolerance_json(runs: &str, extra: &[&str]) -> Value {
    let mut args = vec![
        "tolerance",
        RC,
        "--runs",
        runs,
        "--seed",
        "11",
        "--format",
        "json",
    ];
    args.extend_from_slice(extra);
    json(&args)
}

#[test]
fn monte_carlo_stays_inside_the_formula_extremes() {
    let v = tolerance_json("64", &["--worst-case"]);
    assert_eq!(v["runs"], 64);
    assert_eq!(v["seed"], 11);
    assert!(v["rng"].as_str().unwrap().contains("ChaCha8"));
    assert_eq!(v["distribution"], "uniform");
    // fc = 1/(2πRC) with R within ±1 % and C within ±5 %.
    let fc = |r: f64, c: f64| 1.0 / (TAU * r * c);
    let (low, high) = (fc(10.1e3, 10.5e-9), fc(9.9e3, 9.5e-9));
    let m = &v["metrics"][0];
    assert_eq!(m["metric"], "cutoff(out)");
    assert_eq!(m["unit"], "Hz");
    close(f(&m["nominal"]), fc(10e3, 10e-9), 1e-5);
    let order: Vec<f64> = ["min", "p01", "p50", "p99", "max"]
        .iter()
        .map(|k| f(&m[k]))
        .collect();
    assert!(order.windows(2).all(|w| w[0] <= w[1]), "{order:?}");
    assert!(
        order[0] >= low * (1.0 - 1e-5) && order[4] <= high * (1.0 + 1e-5),
        "{order:?}"
    );
    assert_eq!(m["count"], 64);
    assert_eq!(m["failures"], 0);
    let counts: u64 = m["histogram"]["counts"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_u64().unwrap())
        .sum();
    assert_eq!(counts, 64);
    // Every trial's corner lies inside 1.5 .. 1.7 kHz (extremes 1.501 and 1.692 kHz).
    assert_eq!(f(&v["expectations"][0]["yield_fraction"]), 1.0);
    assert_eq!(v["expectations"][0]["line"], 9);
    // Worst case: the corners of the box are the formula's extremes, and fc is monotonic
    // in R and C, so the sign method finds them.
    let w = &v["worst_case"];
    assert_eq!(w["exhaustive"], true);
    let wm = &w["metrics"][0];
    close(f(&wm["min"]), low, 1e-5);
    close(f(&wm["max"]), high, 1e-5);
    assert_eq!(wm["signs_matched"], true);
    assert_eq!(wm["min_corner"], serde_json::json!(["high", "high"]));
}

#[test]
fn the_seed_not_the_thread_count_decides_the_result() {
    let one = run(&[
        "tolerance",
        RC,
        "--runs",
        "48",
        "--seed",
        "5",
        "--jobs",
        "1",
        "--format",
        "json",
    ]);
    let two = run(&[
        "tolerance",
        RC,
        "--runs",
        "48",
        "--seed",
        "5",
        "--jobs",
        "2",
        "--format",
        "json",
    ]);
    assert_exit(&one, 0);
    assert_eq!(stdout(&one), stdout(&two));
    let other = run(&[
        "tolerance",
        RC,
        "--runs",
        "48",
        "--seed",
        "6",
        "--jobs",
        "2",
        "--format",
        "json",
    ]);
    assert_ne!(stdout(&one), stdout(&other));
}

#[test]
fn gaussian_draws_spread_less_than_uniform_ones() {
    // σ of a uniform band ±t is t/√3, of the 3σ Gaussian t/3 (common practice).
    let uniform = tolerance_json("200", &[]);
    let gaussian = tolerance_json("200", &["--gaussian"]);
    assert_eq!(gaussian["distribution"], "gaussian");
    let sigma = |v: &Value| f(&v["metrics"][0]["std_dev"]);
    assert!(
        sigma(&gaussian) < sigma(&uniform),
        "{} vs {}",
        sigma(&gaussian),
        sigma(&uniform)
    );
}

const TIGHT: &str = "vsrc V1 (in, gnd) 1 V\nresistor R1 (in, out) 10k tol 1%\n\
capacitor C1 (out, gnd) 10 nF tol 5%\nsweep 1 Hz to 100 kHz per_decade 10\n\
expect cutoff(out) within 1.56 .. 1.62 kHz\n";

#[test]
fn min_yield_is_the_verdict() {
    let args = ["tolerance", "-", "--runs", "40", "--format", "json"];
    let output = run_with(&args, Some(TIGHT), &[]);
    assert_exit(&output, 0);
    let v: Value = serde_json::from_str(&stdout(&output)).unwrap();
    assert_eq!(v["file"], "<stdin>");
    let y = f(&v["overall_yield"]);
    assert!(y > 0.0 && y < 1.0, "{y}");
    let mut strict = args.to_vec();
    strict.extend(["--min-yield", "99%"]);
    assert_exit(&run_with(&strict, Some(TIGHT), &[]), 1);
    let mut lenient = args.to_vec();
    lenient.extend(["--min-yield", "1"]);
    assert_exit(&run_with(&lenient, Some(TIGHT), &[]), 0);
}

#[test]
fn tolerance_table_and_csv() {
    let output = run(&[
        "tolerance",
        RC,
        "--runs",
        "32",
        "--worst-case",
        "--default-tol",
        "2%",
    ]);
    assert_exit(&output, 0);
    let table = stdout(&output);
    for word in [
        "p50",
        "σ",
        "overall",
        "worst case",
        "matches the corners",
        "32 runs",
    ] {
        assert!(table.contains(word), "{word} missing:\n{table}");
    }
    let (header, rows) = csv_rows(&[
        "tolerance",
        RC,
        "--runs",
        "32",
        "--worst-case",
        "--format",
        "csv",
    ]);
    assert_eq!(header.len(), 14);
    assert_eq!(header[0], "kind");
    let kinds: Vec<&str> = rows.iter().map(|r| r[0].as_str()).collect();
    assert_eq!(
        kinds,
        [
            "metric",
            "metric",
            "expectation",
            "expectation",
            "overall",
            "worst_case",
            "worst_case"
        ]
    );
    let min: f64 = rows[0][4].parse().unwrap();
    let max: f64 = rows[0][8].parse().unwrap();
    assert!(min < max);
    assert_eq!(rows[4][13].parse::<f64>().unwrap(), 1.0);
}

#[test]
fn histograms_are_deterministic_svg() {
    let dir = std::env::temp_dir().join(format!("rolloff-histograms-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    let dir_text = dir.to_str().unwrap();
    let args = [
        "tolerance",
        RC,
        "--runs",
        "40",
        "--bins",
        "12",
        "--histograms",
        dir_text,
    ];
    assert_exit(&run(&args), 0);
    let first = std::fs::read_to_string(dir.join("cutoff_out.svg")).unwrap();
    let gain = std::fs::read_to_string(dir.join("gain_out_10_kHz.svg")).unwrap();
    assert_exit(&run(&args), 0);
    assert_eq!(
        first,
        std::fs::read_to_string(dir.join("cutoff_out.svg")).unwrap()
    );
    for svg in [&first, &gain] {
        assert!(!svg.contains("NaN") && !svg.contains("inf"));
        let doc = roxmltree::Document::parse(svg).unwrap();
        assert_eq!(doc.root_element().tag_name().name(), "svg");
        let bars: Vec<_> = doc
            .descendants()
            .filter(|n| n.attribute("class") == Some("bar"))
            .collect();
        assert_eq!(bars.len(), 12);
        let total: u64 = bars
            .iter()
            .map(|b| b.attribute("data-count").unwrap().parse::<u64>().unwrap())
            .sum();
        assert_eq!(total, 40);
        let kinds: Vec<&str> = doc
            .descendants()
            .filter(|n| n.attribute("class") == Some("marker"))
            .map(|n| n.attribute("data-kind").unwrap())
            .collect();
        assert_eq!(kinds, ["p01", "p99", "nominal"]);
    }
    let nominal = roxmltree::Document::parse(&first)
        .unwrap()
        .descendants()
        .find(|n| n.attribute("data-kind") == Some("nominal"))
        .unwrap()
        .attribute("data-value")
        .unwrap()
        .parse::<f64>()
        .unwrap();
    close(nominal, 1.0 / (TAU * 10e3 * 10e-9), 1e-5);
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn tolerance_input_errors_exit_2() {
    let unfitted = run(&["tolerance", FIT, "--runs", "8"]);
    assert_exit(&unfitted, 2);
    assert!(
        stderr(&unfitted).contains("fit it first"),
        "{}",
        stderr(&unfitted)
    );
    assert_exit(&run(&["tolerance", RC, "--runs", "0"]), 2);
    assert_exit(&run(&["tolerance", RC, "--jobs", "0"]), 2);
    assert_exit(&run(&["tolerance", RC, "--default-tol", "lots"]), 2);
    let no_expect =
        "vsrc V1 (in, gnd) 1 V\nresistor R1 (in, out) 1k tol 1%\ncapacitor C1 (out, gnd) 1n\n";
    assert_exit(
        &run_with(&["tolerance", "-", "--runs", "4"], Some(no_expect), &[]),
        2,
    );
}

// ---------------------------------------------------------------- sensitivity

#[test]
fn rc_corner_sensitivities_are_minus_one() {
    let v = json(&["sensitivity", RC, "--format", "json", "--jobs", "2"]);
    let m = &v["metrics"][0];
    assert_eq!(m["metric"], "cutoff(out)");
    let parts = m["parts"].as_array().unwrap();
    assert_eq!(parts.len(), 2);
    for p in parts {
        // fc = 1/(2πRC): ∂ln fc/∂ln R = ∂ln fc/∂ln C = −1 (published formula).
        close(f(&p["normalized"]), -1.0, 1e-4);
    }
    // Sorted by magnitude, in every metric.
    for m in v["metrics"].as_array().unwrap() {
        let magnitudes: Vec<f64> = m["parts"]
            .as_array()
            .unwrap()
            .iter()
            .map(|p| f(&p["normalized"]).abs())
            .collect();
        assert!(
            magnitudes.windows(2).all(|w| w[0] >= w[1]),
            "{magnitudes:?}"
        );
    }
}

#[test]
fn sensitivity_table_csv_and_errors() {
    let output = run(&["sensitivity", RC]);
    assert_exit(&output, 0);
    assert!(
        stdout(&output).contains("cutoff(out) = 1.592 kHz"),
        "{}",
        stdout(&output)
    );
    let (header, rows) = csv_rows(&["sensitivity", RC, "--format", "csv"]);
    assert_eq!(
        header,
        [
            "metric",
            "metric_unit",
            "nominal",
            "part",
            "value",
            "unit",
            "normalized",
            "derivative"
        ]
    );
    assert_eq!(rows.len(), 4);
    // ∂fc/∂R = −fc/R (power law).
    let r1 = rows
        .iter()
        .find(|r| r[0] == "cutoff(out)" && r[3] == "R1")
        .unwrap();
    let fc: f64 = r1[2].parse().unwrap();
    close(r1[7].parse::<f64>().unwrap(), -fc / 10e3, 1e-4);
    assert_exit(&run(&["sensitivity", FIT]), 2);
    assert_exit(&run(&["sensitivity", "no/such/file.rol"]), 2);
}

/// The README shows the histograms of the logger demo; they must be what the binary
/// draws now (`ROLLOFF_UPDATE_SNAPSHOTS=1` rewrites them).
#[test]
fn the_readme_histograms_are_current() {
    let committed = repo_root().join("docs/images/logger_antialias");
    let fresh =
        std::env::temp_dir().join(format!("rolloff-readme-histograms-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&fresh);
    let args = [
        "tolerance",
        "fixtures/demo/logger_antialias.rol",
        "--runs",
        "200",
        "--histograms",
        fresh.to_str().unwrap(),
    ];
    assert_exit(&run(&args), 0);
    let update = std::env::var_os("ROLLOFF_UPDATE_SNAPSHOTS").is_some();
    for name in [
        "cutoff_adc",
        "gain_adc_5_kHz",
        "slope_adc_50_kHz_200_kHz",
        "impedance_zin_100_Hz",
    ] {
        let file = format!("{name}.svg");
        let now = std::fs::read_to_string(fresh.join(&file)).unwrap();
        if update {
            std::fs::write(committed.join(&file), &now).unwrap();
        }
        assert_eq!(
            std::fs::read_to_string(committed.join(&file)).unwrap(),
            now,
            "docs/images/logger_antialias/{file} is not what the binary draws now"
        );
    }
    std::fs::remove_dir_all(&fresh).unwrap();
}
