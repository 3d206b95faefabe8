//! Times `compile` on a file (a dev aid for profiling; the real figures come from the
//! criterion bench).
#![allow(clippy::unwrap_used, clippy::expect_used)]
use rolloff_netlist::{CompileOptions, compile};
use std::time::Instant;

fn main() {
    let path = std::env::args().nth(1).expect("usage: time_compile FILE");
    let text = std::fs::read_to_string(path).expect("read");
    for _ in 0..3 {
        let start = Instant::now();
        let compiled = compile(&text, &CompileOptions::default());
        println!(
            "{:.1} ms, {} parts",
            start.elapsed().as_secs_f64() * 1e3,
            compiled.circuit.map_or(0, |c| c.parts.len())
        );
    }
}
