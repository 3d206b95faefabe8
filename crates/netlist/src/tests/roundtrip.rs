//! Printing: parse → print → parse gives the same circuit (spans aside).

use super::ok;
use crate::{Circuit, Span};

/// The circuit with every span zeroed, for comparisons "modulo spans".
pub(super) fn without_spans(mut c: Circuit) -> Circuit {
    for p in &mut c.parts {
        p.span = Span::default();
    }
    for p in &mut c.probes {
        p.span = Span::default();
    }
    for e in &mut c.expectations {
        e.span = Span::default();
    }
    c
}

#[track_caller]
pub(super) fn round_trip(source: &str) {
    let first = ok(source);
    let printed = first.to_string();
    let second = ok(&printed);
    assert_eq!(
        without_spans(first),
        without_spans(second.clone()),
        "printed:\n{printed}"
    );
    assert_eq!(second.to_string(), printed, "printing is not stable");
}

#[test]
fn hierarchical_circuit_round_trips_flat() {
    round_trip(
        "title \"shaft vibration sensor interface\"\n\
         let r_in = 100k\nlet f_hp = 0.7 Hz\nlet c_cc = 1 / (2 * pi * r_in * f_hp)\n\
         block hp (a, b) c = 10n, r = 10k\n  capacitor C (a, b) c tol 5%\n  resistor R (b, gnd) r\nend\n\
         vsrc SENSE (tip, gnd) 100 mV bias 11 V rs 50 phase 12.5 deg\n\
         resistor RB (tip, gnd) 3k3 tol 1%\n\
         capacitor CC (tip, x) c_cc tol -20% .. +80% rated 25 V polar\n\
         resistor RIN (x, gnd) r_in tol 0.3%\n\
         opamp U1 (out) from (x, fb) gain 2e5 gbw 1 MHz swing -12 .. 12 V\n\
         resistor RF (out, fb) 47k\nresistor RG (fb, gnd) 4k7\n\
         use hp S1 (out, y)\nchain 3 hp LAD (y, z) r = 22k\n\
         isrc I1 (gnd, z) 1 mA rp 1M\nvcvs E1 (e, gnd) from (z, gnd) gain -3\nresistor RE (e, gnd) 1k\n\
         vccs G1 (g, gnd) from (z, gnd) gm 40 mS\nresistor RGG (g, gnd) 1k\ninductor L1 (g, gnd) 1.5 mH tol 10%\n\
         drive SENSE\nsweep 10 mHz to 100 kHz per_decade 30\n\
         probe out ref 1 kHz\nprobe ratio = out / tip\nprobe diff = out - x\nprobe i1 = current LAD.s2.R\nprobe zin\nprobe zo = zout out\n\
         expect cutoff(out) within 0.5 .. 1 Hz\nexpect passband_gain(out) = 20.7 dB ± 0.2 dB\n\
         expect bias(out) within -5 .. 5 mV\nexpect slope(out, 1 Hz, 4 Hz) = 6 dB/oct ± 1.5\n\
         expect bias(CC) <= 20 V\nexpect gain(current RF, 1 kHz) < 0 dB\nexpect q(LAD.j1) < 0.7\n\
         expect cutoff(out, ref 1 kHz, level -6 dB) = 2.5 kHz ± 2 %\nexpect impedance(zin, 1 kHz) >= 10 kΩ\n",
    );
}

#[test]
fn sweeps_and_fits_round_trip() {
    round_trip(
        "vsrc V (a, gnd) 1 V\nresistor R (a, b) ? in 1k .. 100k\ncapacitor C (b, gnd) ?\nsweep 0 Hz to 20 kHz every 100 Hz\nprobe b\nexpect cutoff(b) = 1 kHz\n",
    );
    round_trip(
        "vsrc V (a, gnd) 1 V\nresistor R (a, gnd) 1k\nsweep at 50 Hz, 1 kHz, 20 kHz\nprobe p = a\nprobe zz = zin\n",
    );
}

#[test]
fn printed_form_is_canonical() {
    let c = ok(
        "vsrc V (in, gnd) 1 V\nresistor R1 (in, out) 4k7 tol 1%\ncapacitor C1 (out, gnd) 2n2\nprobe out\nexpect cutoff(out) within 14 .. 18 kHz\n",
    );
    assert_eq!(
        c.to_string(),
        "vsrc V (in, gnd) 1 V\nresistor R1 (in, out) 4.7 kΩ tol 1%\ncapacitor C1 (out, gnd) 2.2 nF\nprobe out\nexpect cutoff(out) within 14 kHz .. 18 kHz\n"
    );
}

#[test]
fn awkward_numbers_print_exactly() {
    for value in [
        1.0 / 3.0,
        2.0f64.sqrt() * 1e-13,
        123_456_789.123,
        1e-20,
        7e20,
        0.1 + 0.2,
    ] {
        let source = format!(
            "vsrc V (a, gnd) 1 V\nresistor R (a, gnd) {value:e} tol {:e}\n",
            value.min(0.5)
        );
        round_trip(&source);
    }
}
