//! A small SVG writer: numbers rounded to 0.01 px without trailing zeros, escaped text, and
//! path data built from pixel runs.
//!
//! Writing by hand keeps the output compact and deterministic (the same scene always gives the
//! same bytes), which matters for caching and for diffing figures in tests.

use crate::geometry::Px;

/// Largest coordinate magnitude written (px); geometry is clipped well inside this already.
const MAX_COORD: f64 = 1e7;

/// Appends `v` rounded to 0.01, without trailing zeros ("12.5", "3", "-0.25").
pub fn push_num(out: &mut String, v: f64) {
    let v = if v.is_finite() {
        v.clamp(-MAX_COORD, MAX_COORD)
    } else {
        0.0
    };
    let mut r = (v * 100.0).round() as i64;
    if r < 0 {
        out.push('-');
        r = -r;
    }
    let int = r / 100;
    let frac = r % 100;
    out.push_str(&int.to_string());
    if frac != 0 {
        out.push('.');
        if frac % 10 == 0 {
            out.push(char::from(b'0' + (frac / 10) as u8));
        } else {
            out.push(char::from(b'0' + (frac / 10) as u8));
            out.push(char::from(b'0' + (frac % 10) as u8));
        }
    }
}

/// `v` as [`push_num`] writes it.
pub fn num(v: f64) -> String {
    let mut s = String::new();
    push_num(&mut s, v);
    s
}

/// Appends `text` with the five XML special characters escaped; control characters other than
/// tab are dropped (they are not allowed in XML 1.0).
pub fn push_escaped(out: &mut String, text: &str) {
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            '\t' => out.push(' '),
            c if c.is_control() => {}
            c => out.push(c),
        }
    }
}

/// `text` escaped as [`push_escaped`] does.
pub fn escape(text: &str) -> String {
    let mut s = String::with_capacity(text.len());
    push_escaped(&mut s, text);
    s
}

/// A ` stroke-dasharray` attribute for a dash pattern (on, off) given at figure scale 1,
/// drawn at scale `s`; nothing for a solid line. A zero-length dash stays just above zero
/// so that round caps still draw dots.
pub fn dasharray(dash: Option<(f64, f64)>, s: f64) -> String {
    dash.map(|(on, off)| {
        format!(
            " stroke-dasharray=\"{} {}\"",
            num((on * s).max(0.01)),
            num(off * s)
        )
    })
    .unwrap_or_default()
}

/// Path data ("M x y L x y x y …") for a set of pixel runs.
pub fn path_data(runs: &[Vec<Px>]) -> String {
    let mut d = String::new();
    for run in runs {
        for (i, p) in run.iter().enumerate() {
            match i {
                0 => d.push('M'),
                1 => d.push('L'),
                _ => d.push(' '),
            }
            push_num(&mut d, p[0]);
            d.push(' ');
            push_num(&mut d, p[1]);
        }
    }
    d
}

/// Path data for a closed polygon through `pts`.
pub fn polygon_data(pts: &[Px]) -> String {
    let mut d = path_data(&[pts.to_vec()]);
    if !d.is_empty() {
        d.push('Z');
    }
    d
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_are_rounded_and_trimmed() {
        assert_eq!(num(12.0), "12");
        assert_eq!(num(12.5), "12.5");
        assert_eq!(num(0.254), "0.25");
        assert_eq!(num(-0.05), "-0.05");
        assert_eq!(num(-0.001), "0");
        assert_eq!(num(f64::NAN), "0");
        assert_eq!(num(1e300), "10000000");
        assert_eq!(num(3.999), "4");
    }

    #[test]
    fn text_is_escaped() {
        assert_eq!(
            escape("a<b & \"c\" 'd'>\u{7}"),
            "a&lt;b &amp; &quot;c&quot; &apos;d&apos;&gt;"
        );
    }

    #[test]
    fn runs_become_move_and_line_commands() {
        let d = path_data(&[
            vec![[0.0, 0.0], [1.0, 2.0], [3.0, 4.5]],
            vec![[5.0, 5.0], [6.0, 6.0]],
        ]);
        assert_eq!(d, "M0 0L1 2 3 4.5M5 5L6 6");
    }
}
