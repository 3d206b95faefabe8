//! Each error and warning kind: its message and its location.

use super::{check_error, diagnostics, ok};
use crate::{CompileOptions, DiagnosticKind as K, Severity, compile, compile_bytes};

const V: &str = "vsrc V1 (a, gnd) 1 V\n";

#[test]
fn syntax_errors_say_what_was_expected() {
    check_error(
        "vsrc V1 (a, gnd 1 V\n",
        K::Syntax,
        "expected `,` or `)`, found `1`",
        (1, 17),
    );
    check_error(
        &format!("{V}resistor R1 (a, gnd)\n"),
        K::Syntax,
        "expected the part's value",
        (2, 21),
    );
    check_error(
        "vsrc V1 (a, gnd) 1 V extra\n",
        K::Syntax,
        "unexpected `extra`",
        (1, 22),
    );
    check_error(
        "let x = 2 k x\nvsrc V1 (a, gnd) x\n",
        K::Syntax,
        "expected the end of the line, found `k`",
        (1, 11),
    );
    check_error(
        &format!("{V}resistor R1 (a, gnd) 1k rated 2 V\n"),
        K::Syntax,
        "`rated` is not an option of a `resistor`",
        (2, 25),
    );
    check_error(
        "title \"open\nvsrc V1 (a, gnd) 1 V\n",
        K::Syntax,
        "no closing",
        (1, 7),
    );
    check_error(
        &format!("{V}opamp U (o) from (a)\n"),
        K::PinCount,
        "an `opamp` connects one output node, then `from (in+, in-)`; this one has 1 and 1",
        (2, 10),
    );
}

#[test]
fn unknown_keywords_and_refused_shapes() {
    check_error(
        "resistr R1 (a, gnd) 1k\n",
        K::UnknownKeyword,
        "unknown statement `resistr`",
        (1, 1),
    );
    check_error(
        "R1 a gnd 10k\n",
        K::UnknownKeyword,
        "unknown statement `R1`",
        (1, 1),
    );
    check_error(
        ".ac dec 10\n",
        K::UnknownKeyword,
        "cannot start with a dot",
        (1, 1),
    );
    check_error(
        &format!("{V}+ 2\n"),
        K::UnknownKeyword,
        "cannot start with `+`",
        (2, 1),
    );
    let d = diagnostics("Resistor R1 (a, gnd) 1k\n");
    assert_eq!(
        d[0].help.as_deref(),
        Some("keywords are lower case: write `resistor`")
    );
}

#[test]
fn refusals_say_what_to_write() {
    let cases = [
        ("resistor R1 (a, gnd) 10K", "write `10k`", (2, 24)),
        ("resistor R1 (a, gnd) 4K7", "write `4k7`", (2, 22)),
        ("resistor R1 (a, gnd) 1meg", "write `1M`", (2, 23)),
        ("resistor R1 (a, GND) 1k", "write `gnd`", (2, 17)),
        ("resistor R1 (a, 0) 1k", "write `gnd` here", (2, 17)),
    ];
    for (line, label, at) in cases {
        let source = format!("{V}{line}\n");
        let d = &diagnostics(&source)[0];
        assert_eq!(d.kind, K::Refusal, "{line}");
        assert_eq!(d.expected.as_deref(), Some(label), "{line}");
        assert_eq!(crate::line_col(&source, d.span.start), at, "{line}");
    }
    let d = &diagnostics(&format!("{V}resistor R1 (a, gnd) R47\n"))[0];
    assert_eq!(d.kind, K::Refusal);
    assert_eq!(
        d.help.as_deref(),
        Some("a value code starts with a digit: write `0R47`")
    );
}

#[test]
fn number_range_errors() {
    check_error(
        &format!("{V}resistor R1 (a, gnd) 1e999\n"),
        K::NumberRange,
        "too large",
        (2, 22),
    );
    check_error(
        &format!("{V}resistor R1 (a, gnd) 1e-999\n"),
        K::NumberRange,
        "too small",
        (2, 22),
    );
    check_error(
        &format!("{V}resistor R1 (a, gnd) 1e99999999999999999999999\n"),
        K::NumberRange,
        "too large",
        (2, 22),
    );
    check_error(
        &format!("{V}resistor R1 (a, gnd) NaN\n"),
        K::UnknownName,
        "unknown name `NaN`",
        (2, 22),
    );
    check_error(
        &format!("let x = 1 / 0\n{V}resistor R1 (a, gnd) x\n"),
        K::BadValue,
        "no finite value",
        (1, 9),
    );
}

#[test]
fn dimension_errors_show_both() {
    let source = format!("let f_lo = 12 Hz\n{V}resistor R1 (a, gnd) f_lo\n");
    let d = &diagnostics(&source)[0];
    assert_eq!(d.kind, K::Dimension);
    assert_eq!(
        d.message,
        "the resistance of `R1` must be a resistance (Ω), but this is a frequency (Hz)"
    );
    assert_eq!(
        d.expected.as_deref(),
        Some("expected a resistance (Ω), found Hz")
    );
    assert_eq!(d.notes, ["`f_lo` is defined on line 1 as 12 Hz"]);
    assert_eq!(crate::line_col(&source, d.span.start), (3, 22));
    check_error(
        &format!("{V}capacitor C1 (a, gnd) 10 uH\n"),
        K::Dimension,
        "must be a capacitance (F), but this is an inductance (H)",
        (2, 23),
    );
    check_error(
        &format!("let x = 1 kΩ + 2 Hz\n{V}resistor R1 (a, gnd) x\n"),
        K::Dimension,
        "cannot add a resistance (Ω) and a frequency (Hz)",
        (1, 9),
    );
    check_error(
        &format!("let x = sqrt(2 Hz)\n{V}resistor R1 (a, gnd) 1k\nresistor R2 (a, gnd) (x * 1)\n"),
        K::Dimension,
        "square root",
        (1, 9),
    );
    check_error(
        &format!("let x = exp(1 V)\n{V}resistor R1 (a, gnd) x\n"),
        K::Dimension,
        "take a plain number",
        (1, 9),
    );
    check_error(
        &format!("let x = 2 Hz ^ 0.5\n{V}resistor R1 (a, gnd) x\n"),
        K::Dimension,
        "whole power",
        (1, 9),
    );
    check_error(
        &format!("{V}resistor R1 (a, gnd) 1k tol 5 V\n"),
        K::Dimension,
        "tolerance",
        (2, 29),
    );
}

#[test]
fn bare_numbers_in_comparisons() {
    let base = format!("{V}resistor R1 (a, gnd) 1k\n");
    let d = &diagnostics(&format!("{base}expect gain(a, 1 kHz) >= 8\n"))[0];
    assert_eq!(d.kind, K::Dimension);
    assert!(d.message.contains("bare number is ambiguous"));
    assert!(d.help.as_deref().unwrap().contains("`20 dB`"));
    ok(&format!("{base}expect q(a) > 0.5\n"));
    check_error(
        &format!("{base}expect cutoff(a) < 3 dB\n"),
        K::Dimension,
        "must be a frequency (Hz), but this is a level (dB)",
        (3, 20),
    );
    check_error(
        &format!("{base}expect cutoff(a) = 1 kHz\n"),
        K::Syntax,
        "`=` needs a tolerance",
        (3, 20),
    );
}

#[test]
fn non_positive_values() {
    check_error(
        &format!("{V}resistor R1 (a, gnd) -10k\n"),
        K::BadValue,
        "must be positive, not -10000",
        (2, 22),
    );
    check_error(
        &format!("{V}capacitor C1 (a, gnd) 0 F\n"),
        K::BadValue,
        "must be positive",
        (2, 23),
    );
    check_error(
        "vsrc V1 (a, gnd) 1 V rs 0\nresistor R (a, gnd) 1k\n",
        K::BadValue,
        "series resistance",
        (1, 25),
    );
    check_error(
        &format!("{V}resistor R1 (a, gnd) 1k\nsweep 1 kHz to 1 Hz per_decade 10\n"),
        K::BadValue,
        "ends below its start",
        (3, 16),
    );
    check_error(
        &format!("{V}resistor R1 (a, gnd) 1k\nsweep 1 Hz to 1 kHz per_decade 2.5\n"),
        K::BadValue,
        "whole number",
        (3, 32),
    );
    check_error(
        &format!("{V}resistor R1 (a, gnd) 1k\nsweep 0 Hz to 1 kHz every 0 Hz\n"),
        K::BadValue,
        "cannot be 0 Hz",
        (3, 27),
    );
    check_error(
        &format!("{V}resistor R1 (a, gnd) 0 Hz\n"),
        K::Dimension,
        "resistance",
        (2, 22),
    );
    check_error(
        &format!("{V}resistor R1 (a, gnd) ? in 10k .. 1k\n"),
        K::BadValue,
        "fit range is empty",
        (2, 34),
    );
    check_error(
        &format!("{V}resistor R1 (a, gnd) 1k tol 150% .. 10%\n"),
        K::BadValue,
        "tolerance band",
        (2, 29),
    );
}

#[test]
fn unknown_names_with_did_you_mean() {
    let d = &diagnostics(&format!("let r_load = 1k\n{V}resistor R1 (a, gnd) r_lod\n"))[0];
    assert_eq!(
        (d.kind, d.message.as_str()),
        (K::UnknownName, "unknown name `r_lod`")
    );
    assert_eq!(d.help.as_deref(), Some("did you mean `r_load`?"));
    let d = &diagnostics("vsrc V1 (out, gnd) 1 V\nresistor R1 (out, gnd) 1k\nprobe otu\n")[0];
    assert_eq!(d.help.as_deref(), Some("did you mean `out`?"));
    check_error(
        "vsrc V1 (out, gnd) 1 V\nresistor R1 (out, gnd) 1k\nexpect cutof(out) < 1 kHz\n",
        K::UnknownName,
        "unknown metric `cutof`",
        (3, 8),
    );
    check_error(
        &format!("{V}use stage S1 (a, gnd)\n"),
        K::UnknownName,
        "unknown block `stage`",
        (2, 5),
    );
    check_error(
        &format!("{V}resistor R1 (a, gnd) 1k\nprobe i = current R2\n"),
        K::UnknownName,
        "unknown name `R2`",
        (3, 19),
    );
    check_error(
        &format!("{V}resistor R1 (a, gnd) 1k\ndrive R1\n"),
        K::BadValue,
        "cannot be the drive",
        (3, 7),
    );
}

#[test]
fn duplicates() {
    check_error(
        &format!("{V}resistor R1 (a, gnd) 1k\nresistor R1 (a, gnd) 2k\n"),
        K::Duplicate,
        "the name `R1` is used twice",
        (3, 10),
    );
    check_error(
        "let a = 1\nvsrc V1 (a, gnd) 1 V\n",
        K::Duplicate,
        "`a` is a `let`, not a node",
        (2, 10),
    );
    check_error(
        &format!("{V}resistor R1 (a, gnd) 1k tol 1% tol 2%\n"),
        K::Duplicate,
        "`tol` is given twice",
        (2, 32),
    );
    check_error(
        &format!("{V}resistor R1 (a, gnd) 1k\nsweep at 1 Hz\nsweep at 2 Hz\n"),
        K::Repeated,
        "a second `sweep`",
        (4, 1),
    );
}

#[test]
fn pin_counts() {
    let rc = "block rc (a, b)\n  resistor R (a, b) 1k\nend\n";
    check_error(
        &format!("{rc}vsrc V1 (x, gnd) 1 V\nuse rc S1 (x, y, gnd)\n"),
        K::PinCount,
        "has 2 pins (a, b), this connects 3",
        (5, 11),
    );
    check_error(
        &format!("{rc}vsrc V1 (x, gnd) 1 V\nchain 0 rc L (x, gnd)\n"),
        K::BadValue,
        "1 to 1000000 stages",
        (5, 7),
    );
    let tee = "block tee (a, b, c)\n  resistor R (a, b) 1k\n  resistor R2 (b, c) 1k\nend\n";
    check_error(
        &format!("{tee}vsrc V1 (x, gnd) 1 V\nchain 3 tee L (x, gnd)\n"),
        K::PinCount,
        "two pins",
        (6, 9),
    );
    check_error(
        &format!("{V}resistor R1 (a, gnd, b) 1k\n"),
        K::PinCount,
        "connects two nodes; this one has 3",
        (2, 14),
    );
}

#[test]
fn recursive_and_unterminated_blocks() {
    check_error(
        "block a1 (x, y)\n  use a1 inner (x, y)\nend\nvsrc V1 (p, gnd) 1 V\nuse a1 A (p, gnd)\n",
        K::RecursiveBlock,
        "block `a1` uses itself (a1 → a1)",
        (2, 7),
    );
    check_error(
        "vsrc V1 (p, gnd) 1 V\nblock rc (a, b)\n  resistor R (a, b) 1k\n",
        K::Unterminated,
        "block `rc` has no `end`",
        (2, 7),
    );
    check_error(
        "vsrc V1 (p, gnd) 1 V\nend\n",
        K::Unterminated,
        "`end` without a `block`",
        (2, 1),
    );
    check_error(
        "block a1 (x, y)\n  probe x\nend\nvsrc V1 (p, gnd) 1 V\n",
        K::Syntax,
        "`probe` is not allowed inside a block",
        (2, 3),
    );
}

#[test]
fn no_path_to_ground() {
    check_error(
        &format!("{V}resistor R1 (a, gnd) 1k\nresistor R2 (x, y) 1k\nresistor R3 (y, x) 1k\n"),
        K::NoPathToGround,
        "nodes `x`, `y` have no path to `gnd`",
        (3, 14),
    );
    // Capacitors count as paths here (the bias analysis is stricter).
    ok(&format!(
        "{V}capacitor C1 (a, b) 1u\ncapacitor C2 (b, gnd) 1u\n"
    ));
}

#[test]
fn nesting_depth_is_bounded() {
    let deep = format!(
        "{V}resistor R1 (a, gnd) {}1{}\n",
        "(".repeat(10_000),
        ")".repeat(10_000)
    );
    let d = &diagnostics(&deep)[0];
    assert_eq!(d.kind, K::TooDeep);
    assert_eq!(
        crate::line_col(&deep, d.span.start),
        (2, 22 + 64),
        "at the 65th parenthesis"
    );
    assert!(d.message.contains("at most 64 levels"), "{}", d.message);
    let signs = format!("{V}resistor R1 (a, gnd) ({}1)\n", "-".repeat(10_000));
    assert_eq!(diagnostics(&signs)[0].kind, K::TooDeep);
    let powers = format!("{V}resistor R1 (a, gnd) (2{})\n", "^2".repeat(10_000));
    assert_eq!(diagnostics(&powers)[0].kind, K::TooDeep);
    // Just inside the limit is fine.
    ok(&format!(
        "{V}resistor R1 (a, gnd) {}1{}\n",
        "(".repeat(60),
        ")".repeat(60)
    ));
}

#[test]
fn long_lines_and_bad_bytes() {
    let long = format!("{V}resistor R1 (a, gnd) 1k {}\n", "x".repeat(1 << 20));
    check_error(&long, K::LineTooLong, "at most 65536", (2, 65537));
    let compiled = compile_bytes(
        b"vsrc V1 (a, gnd) 1 V\nresistor R1 (a, gnd) \xff\n",
        &CompileOptions::default(),
    );
    assert_eq!(compiled.diagnostics[0].kind, K::InvalidUtf8);
    assert_eq!(compiled.diagnostics[0].span.start, 42);
    check_error("", K::Empty, "no parts", (1, 1));
    check_error("# only a comment\n", K::Empty, "no parts", (2, 1));
}

#[test]
fn overrides_of_unknown_lets_are_errors() {
    let options = CompileOptions {
        overrides: vec![("r_lod".into(), "1k".into())],
    };
    let compiled = compile(
        &format!("let r_load = 1k\n{V}resistor R1 (a, gnd) r_load\n"),
        &options,
    );
    let d = &compiled.diagnostics[0];
    assert_eq!(d.kind, K::Override);
    assert!(d.message.contains("no `let r_lod`"));
    assert_eq!(d.help.as_deref(), Some("did you mean `r_load`?"));
    let options = CompileOptions {
        overrides: vec![("r".into(), "1 Hz".into())],
    };
    let compiled = compile(
        &format!("let r = 1k\n{V}resistor R1 (a, gnd) r\n"),
        &options,
    );
    assert_eq!(compiled.diagnostics[0].kind, K::Dimension);
    let options = CompileOptions {
        overrides: vec![("r".into(), "(1".into())],
    };
    let compiled = compile(
        &format!("let r = 1k\n{V}resistor R1 (a, gnd) r\n"),
        &options,
    );
    assert_eq!(compiled.diagnostics[0].kind, K::Override);
}

#[test]
fn every_error_in_one_pass() {
    let source = format!(
        "{V}resistor R1 (a, gnd) 10K\ncapacitor C1 (a, gnd) 1 kΩ\nfrobnicate\nresistor R2 (a, gnd) 1k\nprobe nowhere\n"
    );
    let d = diagnostics(&source);
    let kinds: Vec<K> = d.iter().map(|d| d.kind).collect();
    assert_eq!(
        kinds,
        [K::Refusal, K::Dimension, K::UnknownKeyword, K::UnknownName]
    );
}

#[test]
fn warnings() {
    let d = diagnostics(
        "let unused = 3\nvsrc V1 (out, gnd) 1 V\nresistor R1 (out, gnd) 1k\ncapacitor C1 (ot, gnd) 1n\nresistor R2 (out, out) 1k\n",
    );
    assert!(d.iter().all(|d| d.severity == Severity::Warning), "{d:#?}");
    let kinds: Vec<K> = d.iter().map(|d| d.kind).collect();
    assert_eq!(kinds, [K::UnusedLet, K::SingleConnection, K::ShortedPart]);
    assert_eq!(d[1].message, "node `ot` has only one connection");
    assert_eq!(d[1].help.as_deref(), Some("did you mean `out`?"));
    assert_eq!(d[2].message, "both ends of `R2` are on node `out`");
    let source = "let unused = 3\nvsrc V1 (out, gnd) 1 V\nresistor R1 (out, gnd) 1k\ncapacitor C1 (ot, gnd) 1n\nresistor R2 (out, out) 1k\n";
    let at: Vec<(usize, usize)> = d
        .iter()
        .map(|d| crate::line_col(source, d.span.start))
        .collect();
    assert_eq!(at, [(1, 5), (4, 15), (5, 10)]);
    // A circuit with warnings only is still built.
    assert!(
        compile(
            "vsrc V1 (out, gnd) 1 V\nresistor R2 (out, out) 1k\n",
            &CompileOptions::default()
        )
        .circuit
        .is_some()
    );
}
