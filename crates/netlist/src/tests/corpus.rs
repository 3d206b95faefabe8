//! The `fixtures/bad` corpus: one `.rol` file per error, its rendered diagnostics
//! beside it as `.txt`. `UPDATE_EXPECT=1 cargo test -p rolloff-netlist` rewrites them.

use crate::{CompileOptions, compile_bytes, render_all, valid_prefix};
use std::path::Path;

#[test]
fn bad_fixtures_render_as_expected() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("fixtures/bad");
    let update = std::env::var_os("UPDATE_EXPECT").is_some();
    let mut entries: Vec<_> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|x| x == "rol"))
        .collect();
    entries.sort();
    assert!(entries.len() >= 50, "the corpus went missing");
    let mut failures = Vec::new();
    for path in entries {
        let bytes = std::fs::read(&path).unwrap();
        let compiled = compile_bytes(&bytes, &CompileOptions::default());
        let file_name = path.file_name().unwrap().to_string_lossy().into_owned();
        assert!(
            compiled.has_errors() && compiled.circuit.is_none(),
            "{file_name}: a bad fixture must give an error"
        );
        let rendered = render_all(&compiled.diagnostics, &file_name, valid_prefix(&bytes));
        let expected_path = path.with_extension("txt");
        if update {
            std::fs::write(&expected_path, &rendered).unwrap();
            continue;
        }
        let expected = std::fs::read_to_string(&expected_path).unwrap_or_default();
        if expected != rendered {
            failures.push(format!(
                "--- {file_name}: expected\n{expected}\n--- got\n{rendered}"
            ));
        }
    }
    assert!(
        failures.is_empty(),
        "{}\n(UPDATE_EXPECT=1 rewrites)",
        failures.join("\n")
    );
}
