//! The README's embedding example runs as written, and the README still shows it.
#![allow(clippy::unwrap_used, clippy::expect_used)]

use std::path::Path;

fn repo_root() -> &'static Path {
    Path::new(concat!(env!("CARGO_MANIFEST_DIR"), "/../.."))
}

#[test]
fn the_embedding_example_checks_the_demo() -> Result<(), Box<dyn std::error::Error>> {
    // The example uses repository-relative paths, as a reader runs it from the root.
    // This test binary holds no other test, so changing directory disturbs nothing.
    std::env::set_current_dir(repo_root())?;
    include!("snippets/readme_example.rs");
    Ok(())
}

#[test]
fn the_readme_shows_the_tested_example() {
    let readme = std::fs::read_to_string(repo_root().join("README.md")).unwrap();
    let example = include_str!("snippets/readme_example.rs");
    for line in example.lines().map(str::trim).filter(|l| l.len() > 1) {
        assert!(
            readme.contains(line),
            "README.md lacks the tested line `{line}`"
        );
    }
}
