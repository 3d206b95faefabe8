//! Reading circuit files (or standard input) and writing outputs (or standard output).

use std::io::{self, Read, Write};
use std::path::Path;

/// The name shown in diagnostics for standard input.
pub const STDIN_NAME: &str = "<stdin>";

/// A circuit source as read: the name to show and the text.
#[derive(Debug, Clone)]
pub struct Source {
    /// The path as given, or `<stdin>`.
    pub name: String,
    /// The whole file.
    pub text: String,
}

/// Reads `path`, or standard input when it is `-`.
///
/// # Errors
/// A message naming the file when it cannot be read or is not UTF-8.
pub fn read_source(path: &Path) -> Result<Source, String> {
    if path.as_os_str() == "-" {
        let mut text = String::new();
        io::stdin()
            .lock()
            .read_to_string(&mut text)
            .map_err(|e| format!("cannot read standard input: {e}"))?;
        return Ok(Source {
            name: STDIN_NAME.to_string(),
            text,
        });
    }
    let name = path.display().to_string();
    let bytes = std::fs::read(path).map_err(|e| format!("cannot read `{name}`: {e}"))?;
    let text = String::from_utf8(bytes).map_err(|e| {
        format!(
            "`{name}` is not UTF-8 text (byte {})",
            e.utf8_error().valid_up_to()
        )
    })?;
    Ok(Source { name, text })
}

/// Writes `text` to `path`, or to standard output when it is `-`.
///
/// # Errors
/// A message naming the file when it cannot be written.
pub fn write_output(path: &Path, text: &str) -> Result<(), String> {
    if path.as_os_str() == "-" {
        let mut out = io::stdout().lock();
        return out
            .write_all(text.as_bytes())
            .and_then(|()| out.flush())
            .map_err(|e| format!("cannot write standard output: {e}"));
    }
    std::fs::write(path, text).map_err(|e| format!("cannot write `{}`: {e}", path.display()))
}

/// Prints data to standard output. ANSI styles in `text` are kept only on a terminal
/// (and never with `NO_COLOR`), so piped data is plain. A closed pipe
/// (`rolloff sweep … | head`) ends the output quietly instead of failing.
pub fn print_stdout(text: &str) {
    let mut out = anstream::stdout().lock();
    let _ = out.write_all(text.as_bytes()).and_then(|()| out.flush());
}
