//! Property tests: nothing panics, generated circuits survive print → parse, literals
//! round-trip.

use super::roundtrip::without_spans;
use crate::{
    Circuit, Comparison, CompileOptions, Deviation, Expectation, Metric, MetricKind, MetricOptions,
    NodeId, PartKind, ProbeKind, Target, Tolerance, Unit, compile, compile_bytes, render_all,
};
use proptest::prelude::*;

fn config() -> ProptestConfig {
    ProptestConfig {
        cases: 128,
        ..ProptestConfig::default()
    }
}

proptest! {
    #![proptest_config(config())]

    #[test]
    fn arbitrary_strings_never_panic(source in any::<String>()) {
        let compiled = compile(&source, &CompileOptions::default());
        for d in &compiled.diagnostics {
            prop_assert!(d.span.start <= d.span.end);
            prop_assert!(d.span.start <= source.len() + 1);
        }
        let _ = render_all(&compiled.diagnostics, "p.rol", &source);
    }

    #[test]
    fn language_like_soup_never_panics(source in "[a-z0-9RkKMµΩ°%_ ().,=#\"?<>±+\\-−*/^\n]{0,300}") {
        let compiled = compile(&source, &CompileOptions::default());
        let _ = render_all(&compiled.diagnostics, "p.rol", &source);
    }

    #[test]
    fn keyword_soup_never_panics(words in proptest::collection::vec(prop_oneof![
        Just("resistor"), Just("vsrc"), Just("block"), Just("end"), Just("use"), Just("chain"),
        Just("probe"), Just("expect"), Just("sweep"), Just("("), Just(")"), Just(","), Just("a"),
        Just("gnd"), Just("1k"), Just("\n"), Just("="), Just(".."), Just("tol"), Just("cutoff("),
        Just("3"), Just("x"), Just("let"), Just("?"), Just("in"), Just("Hz"), Just("±"),
    ], 0..60)) {
        let source = words.join(" ");
        let compiled = compile(&source, &CompileOptions::default());
        let _ = render_all(&compiled.diagnostics, "p.rol", &source);
    }

    #[test]
    fn byte_soup_never_panics(bytes in proptest::collection::vec(any::<u8>(), 0..400)) {
        let compiled = compile_bytes(&bytes, &CompileOptions::default());
        let _ = render_all(&compiled.diagnostics, "p.rol", crate::valid_prefix(&bytes));
    }

    #[test]
    fn value_codes_equal_decimal_and_prefixed(int in 1u32..1000, frac in 1u32..1000, prefix in prop::sample::select(vec![("k", 3), ("M", 6), ("G", 9), ("n", -9), ("p", -12), ("u", -6), ("m", -3)])) {
        let (p, exp) = prefix;
        let code = format!("{int}{p}{frac}");
        let decimal = format!("{int}.{frac}{p}");
        let scientific = format!("{int}.{frac}e{exp}");
        let v = |text: &str| super::resistance(text);
        prop_assert_eq!(v(&code), v(&decimal));
        prop_assert_eq!(v(&decimal), v(&scientific));
    }

    #[test]
    fn generated_circuits_survive_print_and_parse(seed in any::<u64>()) {
        let circuit = generate(seed);
        let printed = circuit.to_string();
        let compiled = compile(&printed, &CompileOptions::default());
        prop_assert!(!compiled.has_errors(), "{printed}\n{:#?}", compiled.diagnostics);
        let parsed = without_spans(compiled.circuit.unwrap());
        let mut expected = circuit;
        for (e, p) in expected.expectations.iter_mut().zip(&parsed.expectations) {
            e.text.clone_from(&p.text);
        }
        prop_assert_eq!(&parsed, &expected, "{}", printed);
        prop_assert_eq!(parsed.to_string(), printed);
    }
}

/// A small deterministic generator (xorshift), so a failing seed reproduces.
struct Gen(u64);

impl Gen {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        self.0
    }
    fn below(&mut self, n: u64) -> u64 {
        self.next() % n
    }
    /// A positive value spread over decades, with arbitrary mantissa bits.
    fn value(&mut self, lo: i32, hi: i32) -> f64 {
        let e = lo + self.below((hi - lo) as u64) as i32;
        let mantissa = 1.0 + (self.next() >> 11) as f64 / (1u64 << 53) as f64 * 9.0;
        mantissa * 10f64.powi(e)
    }
    fn signed(&mut self, lo: i32, hi: i32) -> f64 {
        if self.below(2) == 0 {
            self.value(lo, hi)
        } else {
            -self.value(lo, hi)
        }
    }
}

/// A random valid circuit: a spanning tree of parts to `gnd` (so every node has a
/// path), extra parts, probes and expectations.
fn generate(seed: u64) -> Circuit {
    let mut g = Gen(seed | 1);
    let mut b = Circuit::builder();
    let n_nodes = 1 + g.below(8) as usize;
    let names: Vec<String> = (1..=n_nodes)
        .map(|i| {
            if i % 3 == 0 {
                format!("S{i}.n")
            } else {
                format!("n{i}")
            }
        })
        .collect();
    let node_of = |g: &mut Gen, upto: usize| -> String {
        let k = g.below(upto as u64 + 1) as usize;
        if k == 0 {
            "gnd".to_string()
        } else {
            names[k - 1].clone()
        }
    };
    let n_parts = n_nodes + g.below(6) as usize;
    for i in 0..n_parts {
        let a = names
            .get(i)
            .cloned()
            .unwrap_or_else(|| node_of(&mut g, n_nodes));
        let other = node_of(&mut g, i.min(n_nodes));
        let name = format!("P{i}");
        let tol = match g.below(3) {
            0 => None,
            1 => Some(Tolerance::symmetric(g.value(-3, -1))),
            _ => Some(Tolerance {
                lower: -g.value(-3, -1),
                upper: g.value(-3, 0),
            }),
        };
        b = match g.below(6) {
            0 => b.resistor(&name, &a, &other, g.value(-2, 9)),
            1 => b.capacitor(&name, &a, &other, g.value(-14, -1)),
            2 => b.inductor(&name, &a, &other, g.value(-9, 2)),
            3 => b.vsrc(&name, &a, &other, g.value(-3, 1)),
            4 => b.isrc(&name, &a, &other, g.value(-6, -1)),
            _ => {
                let (na, no) = (b.node(&a), b.node(&other));
                let kind = PartKind::Capacitor {
                    a: na,
                    b: no,
                    value: g.value(-12, -3),
                    tol: None,
                    fit: None,
                    rated: Some(g.value(0, 3)),
                    polar: g.below(2) == 0,
                };
                b.part(&name, kind)
            }
        };
        if matches!(g.below(3), 0) {
            b = b.tol(tol.unwrap_or(Tolerance::symmetric(0.05)));
        }
    }
    // One of each of the other kinds, hung on existing nodes.
    let (x, y) = (node_of(&mut g, n_nodes), node_of(&mut g, n_nodes));
    let ids = (b.node(&names[0]), b.node(&x), b.node(&y));
    let opamp = PartKind::OpAmp {
        out: ids.0,
        in_pos: ids.1,
        in_neg: ids.2,
        gain: Some(g.value(3, 6)),
        gbw: Some(g.value(5, 8)),
        swing: Some((-g.value(0, 1), g.value(0, 1))),
    };
    let vcvs = PartKind::Vcvs {
        out_pos: ids.0,
        out_neg: NodeId::GND,
        in_pos: ids.1,
        in_neg: ids.2,
        gain: g.signed(-1, 3),
    };
    let vccs = PartKind::Vccs {
        out_pos: ids.1,
        out_neg: ids.0,
        in_pos: ids.2,
        in_neg: NodeId::GND,
        gm: g.signed(-4, 0),
    };
    let source = PartKind::VoltageSource {
        pos: ids.0,
        neg: NodeId::GND,
        amplitude: None,
        phase_deg: g.signed(0, 2),
        bias: Some(g.signed(-1, 1)),
        rs: Some(g.value(0, 3)),
    };
    b = b
        .part("U1", opamp)
        .part("E1", vcvs)
        .part("G1", vccs)
        .part("VB", source);
    b = b
        .probe_node(&names[0])
        .probe("zin", ProbeKind::InputImpedance)
        .probe_current("i0", "P0");
    b = b.probe(
        "ratio",
        ProbeKind::Ratio {
            num: ids.0,
            den: ids.1,
        },
    );
    b = b.sweep(crate::Sweep::Log {
        start: g.value(-2, 1),
        stop: g.value(5, 8),
        per_decade: 1 + g.below(100) as u32,
    });
    b = b.title("generated \"circuit\"");
    let mut circuit = b.build().expect("a valid generated circuit");
    let freq = g.value(0, 5);
    let comparisons = [
        Comparison::Less(g.value(0, 5)),
        Comparison::GreaterEqual(g.value(0, 5)),
        Comparison::Within {
            low: g.value(0, 2),
            high: g.value(3, 5),
        },
        Comparison::Equal {
            value: g.value(0, 5),
            deviation: Deviation::Relative(g.value(-3, -1)),
        },
        Comparison::Equal {
            value: g.value(0, 5),
            deviation: Deviation::Absolute(g.value(-1, 1)),
        },
    ];
    let metrics = [
        (
            MetricKind::Cutoff,
            Unit::Hertz,
            Target::Probe(crate::ProbeId(0)),
        ),
        (
            MetricKind::Gain { freq },
            Unit::Decibel,
            Target::Probe(crate::ProbeId(3)),
        ),
        (
            MetricKind::Phase { freq },
            Unit::Degree,
            Target::Node(ids.1),
        ),
        (
            MetricKind::Slope {
                f1: freq,
                f2: freq * 4.0,
            },
            Unit::DecibelPerDecade,
            Target::Current(crate::PartId(0)),
        ),
        (
            MetricKind::Impedance { freq },
            Unit::Ohm,
            Target::Probe(crate::ProbeId(1)),
        ),
        (MetricKind::Bias, Unit::Volt, Target::Part(crate::PartId(0))),
        (
            MetricKind::Q,
            Unit::Dimensionless,
            Target::Probe(crate::ProbeId(0)),
        ),
        (
            MetricKind::GroupDelay { freq },
            Unit::Second,
            Target::Probe(crate::ProbeId(0)),
        ),
    ];
    for (k, (kind, unit, target)) in metrics.into_iter().enumerate() {
        let options = if k == 0 {
            MetricOptions {
                reference: Some(g.value(1, 4)),
                level_db: Some(-g.value(0, 1)),
            }
        } else {
            MetricOptions::default()
        };
        let target = if matches!(target, Target::Node(_))
            && circuit
                .probes
                .iter()
                .any(|p| p.kind == ProbeKind::Node(ids.1))
        {
            Target::Probe(crate::ProbeId(0))
        } else {
            target
        };
        circuit.expectations.push(Expectation {
            metric: Metric {
                kind,
                target,
                options,
            },
            comparison: comparisons[k % comparisons.len()],
            unit,
            text: String::new(),
            span: crate::Span::default(),
        });
    }
    circuit
}
