//! Writing results: JSON numbers and stdout.

use std::io::Write;

use crate::Failure;

/// Writes text to stdout; a closed pipe is not an error worth a message.
pub fn write_stdout(text: &str) -> Result<(), Failure> {
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|()| out.flush()) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
        Err(e) => Err(e.into()),
    }
}

/// A JSON number, or null for NaN and infinities (which JSON cannot hold).
pub fn num(v: f64) -> serde_json::Value {
    serde_json::Number::from_f64(v).map_or(serde_json::Value::Null, serde_json::Value::Number)
}

/// Pretty JSON with a trailing newline.
pub fn json_text(v: &serde_json::Value) -> String {
    let mut s = serde_json::to_string_pretty(v).unwrap_or_else(|_| "null".into());
    s.push('\n');
    s
}

/// A number for tables: compact, never scientific for ordinary magnitudes.
pub fn fmt(v: f64) -> String {
    if v == 0.0 {
        return "0".into();
    }
    if !v.is_finite() {
        return format!("{v}");
    }
    let a = v.abs();
    if (1e-4..1e6).contains(&a) {
        let s = format!("{v:.6}");
        let s = s.trim_end_matches('0').trim_end_matches('.');
        s.to_owned()
    } else {
        format!("{v:.4e}")
    }
}
