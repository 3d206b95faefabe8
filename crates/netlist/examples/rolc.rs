//! Compiles a `.rol` file and prints its diagnostics and canonical form (a dev aid).
#![allow(clippy::unwrap_used, clippy::expect_used)]
use rolloff_netlist::{CompileOptions, compile_bytes, render_diagnostic, valid_prefix};

fn main() {
    let path = std::env::args().nth(1).expect("usage: rolc FILE");
    let bytes = std::fs::read(&path).expect("read");
    let compiled = compile_bytes(&bytes, &CompileOptions::default());
    let text = valid_prefix(&bytes);
    for d in &compiled.diagnostics {
        eprintln!("{}", render_diagnostic(d, &path, text));
    }
    if let Some(c) = compiled.circuit {
        print!("{c}");
    }
}
