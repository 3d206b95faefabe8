//! The README tells the truth: its embedding example runs as written, and every
//! command of its tour prints exactly what is pasted there.
#![allow(clippy::unwrap_used, clippy::expect_used)]

use std::path::Path;

fn repo_root() -> &'static Path {
    Path::new(concat!(env!("CARGO_MANIFEST_DIR"), "/../.."))
}

#[test]
fn the_embedding_example_checks_the_demo() -> Result<(), Box<dyn std::error::Error>> {
    // The example uses repository-relative paths, as a reader runs it from the root.
    // The other tests of this binary use absolute paths and give each child process its
    // own directory, so changing the process's directory disturbs none of them.
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

/// Splits a README command line like a shell would for the forms the README uses:
/// words separated by spaces, single quotes grouping, `*` globs over one directory.
fn words(command: &str, root: &Path) -> Vec<String> {
    let mut words = Vec::new();
    let mut current = String::new();
    let mut quoted = false;
    for c in command.chars() {
        match c {
            '\'' => quoted = !quoted,
            ' ' if !quoted => {
                if !current.is_empty() {
                    words.push(std::mem::take(&mut current));
                }
            }
            c => current.push(c),
        }
    }
    if !current.is_empty() {
        words.push(current);
    }
    words
        .into_iter()
        .flat_map(|w| match w.split_once("*.") {
            Some((dir, ext)) => {
                let mut files: Vec<String> = std::fs::read_dir(root.join(dir))
                    .unwrap()
                    .map(|e| e.unwrap().file_name().into_string().unwrap())
                    .filter(|name| name.ends_with(&format!(".{ext}")))
                    .map(|name| format!("{dir}{name}"))
                    .collect();
                files.sort();
                files
            }
            None => vec![w],
        })
        .collect()
}

#[test]
fn the_readme_shows_real_output_of_the_current_binary() {
    let root = repo_root();
    let readme = std::fs::read_to_string(root.join("README.md")).unwrap();
    let scratch = std::env::temp_dir().join(format!("rolloff-readme-{}", std::process::id()));
    std::fs::create_dir_all(&scratch).unwrap();
    let mut blocks = 0;
    let mut updated = readme.clone();
    let update = std::env::var_os("ROLLOFF_UPDATE_SNAPSHOTS").is_some();
    for block in readme.split("```text\n").skip(1) {
        let block = block.split("\n```").next().unwrap();
        if !block.starts_with("$ rolloff") {
            continue;
        }
        blocks += 1;
        let mut expected = String::new();
        let mut actual = String::new();
        for line in block.lines() {
            if let Some(command) = line.strip_prefix("$ rolloff ") {
                actual.push_str(line);
                actual.push('\n');
                expected.push_str(line);
                expected.push('\n');
                // Files the README writes go to a scratch directory; a written plot
                // must equal the committed image.
                let mut args = words(command, root);
                let mut written = None;
                for arg in &mut args {
                    let is_svg = Path::new(arg.as_str())
                        .extension()
                        .is_some_and(|e| e.eq_ignore_ascii_case("svg"));
                    if arg == "vibration.json" || is_svg {
                        let target = scratch.join(Path::new(arg.as_str()).file_name().unwrap());
                        if is_svg {
                            written = Some((root.join(arg.as_str()), target.clone()));
                        }
                        *arg = target.to_str().unwrap().to_string();
                    }
                }
                let output = std::process::Command::new(env!("CARGO_BIN_EXE_rolloff"))
                    .args(&args)
                    .current_dir(root)
                    .env_remove("NO_COLOR")
                    .env_remove("CLICOLOR_FORCE")
                    .output()
                    .unwrap();
                let text = String::from_utf8(output.stderr).unwrap()
                    + &String::from_utf8(output.stdout).unwrap();
                let text = text.trim_end();
                if !text.is_empty() {
                    actual.push_str(text);
                    actual.push('\n');
                }
                if let Some((committed, fresh)) = written {
                    if update {
                        std::fs::copy(&fresh, &committed).unwrap();
                    }
                    assert_eq!(
                        std::fs::read_to_string(committed).unwrap(),
                        std::fs::read_to_string(fresh).unwrap(),
                        "the README's plot is not what the binary draws now"
                    );
                }
            } else {
                expected.push_str(line);
                expected.push('\n');
            }
        }
        if update {
            updated = updated.replacen(&expected, &actual, 1);
        } else {
            assert_eq!(
                expected, actual,
                "README block is not the current output (ROLLOFF_UPDATE_SNAPSHOTS=1 rewrites it)"
            );
        }
    }
    if update {
        std::fs::write(root.join("README.md"), updated).unwrap();
    }
    assert!(
        blocks >= 7,
        "the tour shows every command ({blocks} blocks found)"
    );
}
