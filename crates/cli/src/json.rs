//! JSON output: serde views with stable, documented field names; every quantity a
//! number in SI base units (Hz, F, Ω, H, V, A, s; gains in dB, phases in degrees).

use serde::Serialize;

/// Pretty JSON with a final newline.
///
/// The views the commands serialise hold only finite numbers (a value that cannot be
/// found is `null` by design, never a NaN turned into `null` by accident).
pub fn to_json<T: Serialize>(value: &T) -> String {
    let mut text = serde_json::to_string_pretty(value)
        .unwrap_or_else(|e| format!("{{\"error\": \"cannot serialise the output: {e}\"}}"));
    text.push('\n');
    text
}

/// A finite number, or `None` (JSON `null`) for anything else.
pub fn finite(value: f64) -> Option<f64> {
    value.is_finite().then_some(value)
}
