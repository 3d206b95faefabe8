//! End-to-end tests of the `rolloff` binary: every command on the bundled demo, every
//! output format parsed back (CSV with the csv crate, JSON with serde_json, JUnit and
//! SVG as XML with roxmltree), the exit codes 0/1/2, standard input, colour rules and
//! a snapshot of the rendering of a broken file.
//!
//! The reference numbers for the demo circuits come from closed-form or hand-solved
//! network analysis, named beside each check; the tolerances allow for what those
//! hand solutions leave out (stated there too).
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use common::{assert_exit, repo_root, run, run_with, stderr, stdout};
use std::path::PathBuf;

fn demo(name: &str) -> String {
    format!("fixtures/demo/{name}.rol")
}

fn fixture(name: &str) -> String {
    format!("crates/cli/tests/fixtures/{name}")
}

fn temp_path(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("rolloff-cli-tests-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    dir.join(name)
}

// ---------------------------------------------------------------- check

#[test]
fn check_passes_on_the_demo_and_prints_one_line_per_expectation() {
    let output = run(&[
        "check",
        &demo("vibration_frontend"),
        &demo("logger_antialias"),
    ]);
    assert_exit(&output, 0);
    let text = stdout(&output);
    let lines: Vec<&str> = text
        .lines()
        .filter(|l| l.starts_with("pass") || l.starts_with("FAIL"))
        .collect();
    // 7 expectations in the vibration front end, 4 in the logger ladder.
    assert_eq!(lines.len(), 11, "{text}");
    assert!(lines.iter().all(|l| l.starts_with("pass")));
    assert!(
        text.trim_end().ends_with("check: 11 passed, 0 failed"),
        "{text}"
    );
}

#[test]
fn check_fails_with_exit_1_and_shows_measured_bound_and_margin() {
    let output = run(&["check", &fixture("failing.rol")]);
    assert_exit(&output, 1);
    let text = stdout(&output);
    let fail = text.lines().find(|l| l.starts_with("FAIL")).unwrap();
    // The corner of a first-order RC low-pass is 1/(2π·R·C) (any circuit-theory
    // text): 1/(2π · 10 kΩ · 10 nF) = 1.5915 kHz; the margin to 1 kHz + 5 % is −541.5 Hz.
    assert!(fail.contains("1.592 kHz"), "{fail}");
    assert!(fail.contains("= 1 kHz ± 5 %"), "{fail}");
    assert!(
        fail.contains("-541.5 Hz") || fail.contains("-541.6 Hz"),
        "{fail}"
    );
    assert!(text.contains("check: 1 passed, 1 failed"));
}

#[test]
fn check_writes_junit_that_parses_as_xml() {
    let path = temp_path("check.xml");
    let path_text = path.to_str().unwrap();
    let output = run(&[
        "check",
        &demo("logger_antialias"),
        &fixture("failing.rol"),
        &fixture("broken.rol"),
        "--junit",
        path_text,
    ]);
    // A broken file makes the run an input error (2), which outranks a failure (1).
    assert_exit(&output, 2);
    let xml = std::fs::read_to_string(&path).unwrap();
    let doc = roxmltree::Document::parse(&xml).unwrap();
    let root = doc.root_element();
    assert_eq!(root.tag_name().name(), "testsuites");
    assert_eq!(root.attribute("tests"), Some("7"));
    assert_eq!(root.attribute("failures"), Some("1"));
    assert_eq!(root.attribute("errors"), Some("1"));
    let suites: Vec<_> = root
        .children()
        .filter(|n| n.has_tag_name("testsuite"))
        .collect();
    assert_eq!(suites.len(), 3);
    assert_eq!(
        suites[0].attribute("name"),
        Some("fixtures/demo/logger_antialias.rol")
    );
    let cases: Vec<_> = suites[1]
        .children()
        .filter(|n| n.has_tag_name("testcase"))
        .collect();
    assert_eq!(cases.len(), 2);
    assert!(cases[0].children().all(|c| !c.has_tag_name("failure")));
    let failure = cases[1]
        .children()
        .find(|c| c.has_tag_name("failure"))
        .unwrap();
    assert!(failure.attribute("message").unwrap().contains("1.592 kHz"));
}

#[test]
fn check_json_and_csv_parse() {
    let output = run(&["check", &fixture("failing.rol"), "--format", "json"]);
    assert_exit(&output, 1);
    let json: serde_json::Value = serde_json::from_str(&stdout(&output)).unwrap();
    assert_eq!(json["passed"], 1);
    assert_eq!(json["failed"], 1);
    let first = &json["files"][0]["expectations"][0];
    assert_eq!(first["unit"], "Hz");
    let measured = first["measured"].as_f64().unwrap();
    // 1/(2π·10 kΩ·10 nF), the first-order RC corner. The passband reference is the
    // largest gain in the sweep, at 10 Hz, which sits 0.00017 dB below the asymptote and
    // so moves the crossing up by about 4e-5 relative.
    let expected = 1.0 / (2.0 * std::f64::consts::PI * 10e3 * 10e-9);
    assert!((measured / expected - 1.0).abs() < 1e-4, "{measured}");

    let output = run(&["check", &fixture("failing.rol"), "--format", "csv"]);
    let mut reader = csv::Reader::from_reader(output.stdout.as_slice());
    let header: Vec<String> = reader.headers().unwrap().iter().map(String::from).collect();
    assert_eq!(
        header,
        [
            "file",
            "line",
            "expectation",
            "pass",
            "measured",
            "unit",
            "margin",
            "reason"
        ]
    );
    let rows: Vec<_> = reader.records().map(Result::unwrap).collect();
    assert_eq!(rows.len(), 2);
    assert_eq!(&rows[1][3], "false");
    assert!((rows[1][4].parse::<f64>().unwrap() / expected - 1.0).abs() < 1e-4);
}

// ---------------------------------------------------------------- sweep

#[test]
fn sweep_table_has_plain_headers_and_si_prefixes() {
    let output = run(&["sweep", &demo("logger_antialias"), "--at", "100,1k,10k"]);
    assert_exit(&output, 0);
    let text = stdout(&output);
    let header = text.lines().next().unwrap();
    for column in ["f [Hz]", "adc [dB]", "adc [°]", "zin [Ω]", "zin [°]"] {
        assert!(header.contains(column), "{header}");
    }
    assert!(!header.contains('('), "no function-style labels: {header}");
    assert_eq!(text.lines().count(), 5);
    assert!(text.contains("1.000 kHz"));
    assert!(text.contains("kΩ"));
}

#[test]
fn a_current_drive_gives_a_transimpedance_in_dbohm() {
    let output = run(&["sweep", &demo("loop_receiver"), "--at", "1"]);
    assert_exit(&output, 0);
    let text = stdout(&output);
    assert!(text.lines().next().unwrap().contains("f [dBΩ]"), "{text}");
    // 1 mA into 249 Ω ∥ 1 MΩ ∥ (10 kΩ + 1 MΩ), then the 10 kΩ/1 MΩ divider (Ohm's law):
    // 246.4 Ω = 47.83 dBΩ; the 15.7 Hz corner costs 0.02 dB at 1 Hz.
    assert!(text.contains("47.8"), "{text}");
}

#[test]
fn sweep_csv_has_frequency_first_then_db_deg_and_ohm_columns() {
    let output = run(&["sweep", &demo("logger_antialias"), "--format", "csv"]);
    assert_exit(&output, 0);
    let mut reader = csv::Reader::from_reader(output.stdout.as_slice());
    let header: Vec<String> = reader.headers().unwrap().iter().map(String::from).collect();
    assert_eq!(
        header,
        ["frequency_hz", "adc_db", "adc_deg", "zin_ohm", "zin_deg"]
    );
    let rows: Vec<Vec<f64>> = reader
        .records()
        .map(|r| r.unwrap().iter().map(|c| c.parse().unwrap()).collect())
        .collect();
    // `sweep 10 Hz to 1 MHz per_decade 40`: 5 decades × 40 + 1 points.
    assert_eq!(rows.len(), 201);
    assert_eq!(rows[0][0], 10.0);
    assert!((rows[200][0] - 1e6).abs() < 1e-6);
    assert!(rows.windows(2).all(|w| w[1][0] > w[0][0]));
    // At 10 Hz the ladder passes (0 dB) and its input looks like the three capacitors
    // in parallel, |Z| ≈ 1/(2π·10 Hz·30 nF) = 530.5 kΩ (hand analysis; the resistors
    // add under 0.1 %).
    assert!(rows[0][1].abs() < 0.01, "{}", rows[0][1]);
    assert!((rows[0][3] / 530.5e3 - 1.0).abs() < 0.01, "{}", rows[0][3]);
}

#[test]
fn sweep_json_is_numbers_in_si_units() {
    let output = run(&[
        "sweep",
        &demo("vibration_frontend"),
        "--format",
        "json",
        "--at",
        "100",
    ]);
    assert_exit(&output, 0);
    let json: serde_json::Value = serde_json::from_str(&stdout(&output)).unwrap();
    assert_eq!(json["frequency_hz"][0], 100.0);
    let probe = &json["probes"][0];
    assert_eq!(probe["name"], "out");
    assert_eq!(probe["quantity"], "gain");
    // Hand analysis of the front end at 100 Hz: the source divider 2.2 kΩ/(2.2 kΩ+100 Ω)
    // = −0.386 dB, the non-inverting gain 1 + 39k/3k9 = 11 = 20.83 dB; the coupling and
    // output corners (1.5 Hz, 4.8 kHz) take well under 0.05 dB at 100 Hz.
    let gain = probe["gain_db"][0].as_f64().unwrap();
    assert!((gain - 20.44).abs() < 0.05, "{gain}");
    assert!(probe["phase_deg"][0].is_number());
}

#[test]
fn sweep_options_override_the_file() {
    let output = run(&[
        "sweep",
        &demo("vibration_frontend"),
        "--from",
        "1 Hz",
        "--to",
        "1 kHz",
        "--per-decade",
        "2",
        "--format",
        "csv",
    ]);
    assert_exit(&output, 0);
    let text = stdout(&output);
    let freqs: Vec<f64> = text
        .lines()
        .skip(1)
        .map(|l| l.split(',').next().unwrap().parse().unwrap())
        .collect();
    assert_eq!(freqs.len(), 7);
    assert!((freqs[6] - 1000.0).abs() < 1e-9);

    let output = run(&[
        "sweep",
        &demo("vibration_frontend"),
        "--every",
        "250 Hz",
        "--from",
        "0",
        "--to",
        "1k",
        "--format",
        "csv",
    ]);
    assert_exit(&output, 0);
    // The language reports a linear sweep's 0 Hz point as DC: a row with frequency 0.
    let text = stdout(&output);
    assert_eq!(text.lines().count(), 1 + 5);
    assert!(text.lines().nth(1).unwrap().starts_with("0,"), "{text}");
}

/// A series capacitor blocks DC (common practice): at 0 Hz the transfer is exactly zero
/// (−∞ dB) and the input impedance is an open circuit; neither prints as NaN.
#[test]
fn a_linear_sweep_from_0_hz_reports_dc() {
    let circuit = "vsrc V1 (in, gnd) 1 V\ncapacitor C1 (in, out) 100n\n\
                   resistor R1 (out, mid) 10k\nresistor R2 (mid, gnd) 10k\n\
                   sweep 0 Hz to 200 Hz every 100 Hz\nprobe mid\nprobe zin\n";
    let output = run_with(&["sweep", "-"], Some(circuit), &[]);
    assert_exit(&output, 0);
    let table = stdout(&output);
    let dc_row: Vec<&str> = table.lines().nth(2).unwrap().split_whitespace().collect();
    assert_eq!(dc_row, ["DC", "−∞", "n/a", "∞", "n/a"], "{table}");
    assert!(!table.contains("NaN") && !table.contains("inf"), "{table}");

    let output = run_with(&["sweep", "-", "--format", "json"], Some(circuit), &[]);
    assert_exit(&output, 0);
    let json: serde_json::Value = serde_json::from_str(&stdout(&output)).unwrap();
    assert_eq!(json["has_dc"], true);
    assert_eq!(json["probes"][0]["dc"]["value"], 0.0);
    assert!(json["probes"][0]["dc"].get("gain_db").is_none());
    assert_eq!(json["probes"][1]["dc"]["open"], true);
    // Above DC the divider of two equal resistors behind the capacitor: |H| < 1/2.
    let first = json["probes"][0]["gain_db"][0].as_f64().unwrap();
    assert!(first < -6.0206, "{first}");
}

#[test]
fn a_bad_sweep_option_is_an_input_error_with_a_caret() {
    let output = run(&["sweep", &demo("vibration_frontend"), "--to", "1Meg"]);
    assert_exit(&output, 2);
    let text = stderr(&output);
    assert!(text.contains("<command line>:1:"), "{text}");
    assert!(text.contains('^'), "{text}");
}

#[test]
fn set_overrides_a_let() {
    // Doubling r_in halves the coupling corner f = 1/(2π·r_in·c_blk), but c_blk is
    // computed from r_in and f_hp in the file, so moving f_hp is the what-if: 3 Hz.
    let output = run(&["check", &demo("vibration_frontend"), "--set", "f_hp=3 Hz"]);
    assert_exit(&output, 1);
    let text = stdout(&output);
    let line = text.lines().find(|l| l.contains("cutoff_low")).unwrap();
    assert!(line.starts_with("FAIL"), "{line}");
    let output = run(&[
        "check",
        &demo("vibration_frontend"),
        "--set",
        "no_such_let=1",
    ]);
    assert_exit(&output, 2);
}

// ---------------------------------------------------------------- report

#[test]
fn report_summarises_each_probe() {
    let output = run(&["report", &demo("vibration_frontend")]);
    assert_exit(&output, 0);
    let text = stdout(&output);
    for needle in [
        "band-pass",
        "passband gain",
        "cutoff low",
        "cutoff high",
        "bandwidth",
        "slope below",
        "order below     1 (20.0 dB/dec)",
        "group delay",
        "CB",
        "25.00 V",
    ] {
        assert!(text.contains(needle), "missing {needle}:\n{text}");
    }
}

#[test]
fn report_json_has_cutoffs_in_hz() {
    let output = run(&["report", &demo("logger_antialias"), "--format", "json"]);
    assert_exit(&output, 0);
    let json: serde_json::Value = serde_json::from_str(&stdout(&output)).unwrap();
    let adc = &json["probes"][0];
    assert_eq!(adc["name"], "adc");
    assert_eq!(adc["shape"], "low-pass");
    let cutoff = adc["cutoffs"][0]["frequency_hz"].as_f64().unwrap();
    // Three equal RC sections (τ = R·C) driven from zero impedance and unloaded have
    // H = 1/(1 + 6x + 5x² + x³) with x = sτ (the equal-section ladder polynomial, from
    // memory, re-derived by nodal analysis of the three sections); |H| = 1/√2 at
    // ωτ = 0.19429. With R = 4.7 kΩ that is 657.9 Hz. The 350 Ω source resistance adds
    // to the first section only, so the corner lies between that ladder and one with
    // every R = 5.05 kΩ (612.3 Hz); the buffered ADC network (1.6 MHz) is far above.
    let corner = |r: f64| 0.194_286 / (2.0 * std::f64::consts::PI * r * 10e-9);
    assert!(
        cutoff < corner(4.7e3) && cutoff > corner(5.05e3),
        "{cutoff}"
    );
    // The rolloff order of three RC sections is three (−60 dB/decade asymptote).
    assert_eq!(adc["stopbands"][0]["order"], 3);

    let output = run(&["report", &demo("logger_antialias"), "--format", "csv"]);
    let mut reader = csv::Reader::from_reader(output.stdout.as_slice());
    assert_eq!(
        reader.headers().unwrap().iter().collect::<Vec<_>>(),
        ["probe", "metric", "value", "unit"]
    );
    let cutoff_row = reader
        .records()
        .map(Result::unwrap)
        .find(|r| &r[0] == "adc" && &r[1] == "cutoff")
        .unwrap();
    assert_eq!(&cutoff_row[3], "Hz");
}

// ---------------------------------------------------------------- bias

#[test]
fn bias_shows_node_voltages_and_capacitors_against_ratings() {
    let output = run(&["bias", &demo("vibration_frontend"), "--format", "json"]);
    assert_exit(&output, 0);
    let json: serde_json::Value = serde_json::from_str(&stdout(&output)).unwrap();
    let tip = json["nodes"]
        .as_array()
        .unwrap()
        .iter()
        .find(|n| n["name"] == "tip")
        .unwrap();
    // The 12 V bias divides across the 100 Ω source resistance and the 2.2 kΩ bias
    // resistor (Ohm's law): 12 · 2200 / 2300 = 11.478 V.
    assert!((tip["voltage_v"].as_f64().unwrap() - 11.478).abs() < 1e-3);
    let cb = json["capacitors"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["name"] == "CB")
        .unwrap();
    assert_eq!(cb["rated_v"], 25.0);
    assert_eq!(cb["status"], "ok");

    let output = run(&["bias", &demo("vibration_frontend")]);
    let text = stdout(&output);
    assert!(
        text.contains("11.48 V") && text.contains("capacitor"),
        "{text}"
    );

    let output = run(&["bias", &demo("vibration_frontend"), "--format", "csv"]);
    let mut reader = csv::Reader::from_reader(output.stdout.as_slice());
    assert_eq!(reader.headers().unwrap().get(2), Some("voltage_v"));
    assert!(reader.records().count() > 5);
}

#[test]
fn bias_warns_when_a_capacitor_exceeds_its_rating() {
    let source = std::fs::read_to_string(repo_root().join(demo("vibration_frontend"))).unwrap();
    let over = source.replace("rated 25 V", "rated 10 V");
    let output = run_with(&["bias", "-", "--format", "json"], Some(&over), &[]);
    assert_exit(&output, 0);
    let json: serde_json::Value = serde_json::from_str(&stdout(&output)).unwrap();
    let cb = json["capacitors"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["name"] == "CB")
        .unwrap();
    assert_eq!(cb["status"], "over_rated");
    assert_eq!(json["warnings"][0]["kind"], "over_rated");
    assert!(stderr(&output).contains("CB"));
}

// ---------------------------------------------------------------- plot

#[test]
fn plot_writes_an_svg_with_one_trace_per_probe_per_panel() {
    let path = temp_path("logger.svg");
    let output = run(&[
        "plot",
        &demo("logger_antialias"),
        "-o",
        path.to_str().unwrap(),
    ]);
    assert_exit(&output, 0);
    let svg = std::fs::read_to_string(&path).unwrap();
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let traces: Vec<_> = doc
        .descendants()
        .filter(|n| n.has_tag_name("polyline"))
        .collect();
    assert_eq!(traces.len(), 4, "two probes, gain and phase each");
    let probes: Vec<_> = traces
        .iter()
        .map(|t| t.attribute("data-probe").unwrap())
        .collect();
    assert_eq!(probes, ["adc", "adc", "zin", "zin"]);
    let legend: Vec<_> = doc
        .descendants()
        .filter(|n| n.attribute("class") == Some("legend-entry"))
        .map(|n| n.text().unwrap().to_string())
        .collect();
    assert_eq!(legend, ["adc", "zin (dBΩ)"]);
    let cutoff_label = doc
        .descendants()
        .find(|n| n.attribute("class") == Some("cutoff-label"))
        .unwrap();
    assert!(cutoff_label.text().unwrap().ends_with(" Hz"));
    assert!(
        doc.descendants()
            .any(|n| n.attribute("class") == Some("level"))
    );
    // Deterministic: the same input gives the same bytes.
    let output = run(&["plot", &demo("logger_antialias"), "-o", "-"]);
    assert_eq!(stdout(&output), svg);
}

// ---------------------------------------------------------------- snapshot, compare

#[test]
fn snapshot_then_compare_passes_and_a_change_fails() {
    let path = temp_path("vibration.json");
    let path_text = path.to_str().unwrap();
    let output = run(&["snapshot", &demo("vibration_frontend"), "-o", path_text]);
    assert_exit(&output, 0);
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
    assert!(
        json["source_hash"]
            .as_str()
            .unwrap()
            .starts_with("fnv1a64:")
    );
    assert_eq!(json["tool_version"], env!("CARGO_PKG_VERSION"));

    let output = run(&["compare", &demo("vibration_frontend"), path_text]);
    assert_exit(&output, 0);
    assert!(stdout(&output).contains("unchanged"));

    let output = run(&[
        "compare",
        &demo("vibration_frontend"),
        path_text,
        "--set",
        "f_hp=1.6 Hz",
    ]);
    assert_exit(&output, 1);
    assert!(stdout(&output).contains("FAIL"));
    // Loose enough thresholds accept the same change.
    let output = run(&[
        "compare",
        &demo("vibration_frontend"),
        path_text,
        "--set",
        "f_hp=1.6 Hz",
        "--max-db",
        "1",
        "--max-deg",
        "5",
        "--max-rel",
        "0.2",
        "--format",
        "json",
    ]);
    assert_exit(&output, 0);
    let json: serde_json::Value = serde_json::from_str(&stdout(&output)).unwrap();
    assert_eq!(json["pass"], true);

    let output = run(&[
        "compare",
        &demo("vibration_frontend"),
        &demo("vibration_frontend"),
    ]);
    assert_exit(&output, 2);
}

// ---------------------------------------------------------------- input, errors, exit codes

#[test]
fn standard_input_is_read_for_dash() {
    let source = std::fs::read_to_string(repo_root().join(demo("logger_antialias"))).unwrap();
    let output = run_with(&["check", "-"], Some(&source), &[]);
    assert_exit(&output, 0);
    assert!(stdout(&output).starts_with("<stdin>"));
}

#[test]
fn a_broken_file_renders_like_the_snapshot() {
    let output = run(&["check", &fixture("broken.rol")]);
    assert_exit(&output, 2);
    let rendered = stderr(&output);
    assert!(
        !rendered.contains('\u{1b}'),
        "no colour when not a terminal"
    );
    let snapshot = repo_root().join(fixture("broken.stderr"));
    if std::env::var_os("ROLLOFF_UPDATE_SNAPSHOTS").is_some() {
        std::fs::write(&snapshot, &rendered).unwrap();
    }
    let expected = std::fs::read_to_string(&snapshot).unwrap();
    assert_eq!(
        rendered, expected,
        "set ROLLOFF_UPDATE_SNAPSHOTS=1 to accept a change"
    );
    // The rendering names the file, line and column and puts a caret under the text.
    assert!(rendered.contains("--> crates/cli/tests/fixtures/broken.rol:3:26"));
    assert!(rendered.contains("3 | resistor  R1 (in, out) 10K"));
}

#[test]
fn colour_only_when_asked_and_never_with_no_color() {
    let output = run(&["--color", "always", "check", &fixture("broken.rol")]);
    assert!(stderr(&output).contains('\u{1b}'));
    let output = run_with(
        &["check", &fixture("broken.rol")],
        None,
        &[("NO_COLOR", "1")],
    );
    assert!(!stderr(&output).contains('\u{1b}'));
    let output = run_with(
        &["check", &fixture("broken.rol")],
        None,
        &[("CLICOLOR_FORCE", "1"), ("NO_COLOR", "1")],
    );
    assert!(!stderr(&output).contains('\u{1b}'), "NO_COLOR wins");
    // The verdict table is coloured the same way; piped, it stays plain.
    let output = run(&["--color", "always", "check", &fixture("failing.rol")]);
    assert!(stdout(&output).contains("\u{1b}[32mpass"));
    let output = run(&["check", &fixture("failing.rol")]);
    assert!(!stdout(&output).contains('\u{1b}'));
}

#[test]
fn usage_and_input_errors_exit_2() {
    assert_exit(&run(&["sweep"]), 2);
    assert_exit(&run(&["frobnicate"]), 2);
    assert_exit(
        &run(&["sweep", &demo("logger_antialias"), "--format", "yaml"]),
        2,
    );
    let output = run(&["check", "no/such/file.rol"]);
    assert_exit(&output, 2);
    assert!(stderr(&output).contains("no/such/file.rol"));
    assert_exit(&run(&["--help"]), 0);
}

#[test]
fn completions_are_generated_for_bash() {
    let output = run(&["completions", "bash"]);
    assert_exit(&output, 0);
    let text = stdout(&output);
    assert!(text.contains("rolloff") && text.contains("snapshot") && text.contains("--junit"));
}

// ---------------------------------------------------------------- the README

#[test]
fn the_readme_language_example_holds_its_expectations() {
    let file = fixture("readme_language.rol");
    let output = run(&["check", &file]);
    assert_exit(&output, 0);
    // Hand analysis (Thévenin): the 600 Ω source and R1 (10.6 kΩ) against the 100 kΩ
    // load give a DC gain of 100/110.6 = −0.876 dB and a corner at
    // 1/(2π·(10.6 kΩ ∥ 100 kΩ)·10 nF) = 1.661 kHz.
    let text = stdout(&output);
    assert!(
        text.contains("1.661 kHz") && text.contains("-0.88 dB"),
        "{text}"
    );
    let readme = std::fs::read_to_string(repo_root().join("README.md")).unwrap();
    let source = std::fs::read_to_string(repo_root().join(&file)).unwrap();
    assert!(
        readme.contains(&source),
        "README.md shows the tested example verbatim"
    );
}

#[test]
fn a_metric_that_cannot_be_found_fails_with_its_reason() {
    let file = fixture("unmeasurable.rol");
    let output = run(&["check", &file]);
    assert_exit(&output, 1);
    let text = stdout(&output);
    assert!(text.contains("not measured: no −3 dB crossing"), "{text}");
    assert!(!text.contains("NaN"));
    let output = run(&["check", &file, "--format", "json"]);
    let json: serde_json::Value = serde_json::from_str(&stdout(&output)).unwrap();
    let first = &json["files"][0]["expectations"][0];
    assert_eq!(first["pass"], false);
    assert!(first["measured"].is_null());
    assert!(first["reason"].as_str().unwrap().contains("−3 dB"));
    // An equal divider halves the voltage: 20·log10(1/2) = −6.0206 dB.
    let second = &json["files"][0]["expectations"][1];
    assert!((second["measured"].as_f64().unwrap() + 6.0206).abs() < 1e-4);
}
