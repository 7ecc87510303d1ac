//! Text measurement without a font engine: an estimate of rendered width good enough for
//! layout (margins, legend width, caption wrapping), and line wrapping built on it.
//!
//! The estimate is per character class of a humanist sans-serif; it errs on the wide side so
//! that labels measured here never overrun the space given to them.

/// Estimated width (px) of `text` at `size` px.
pub fn text_width(text: &str, size: f64) -> f64 {
    let em: f64 = text
        .chars()
        .map(|c| match c {
            'i' | 'j' | 'l' | '.' | ',' | ':' | ';' | '\'' | '!' | '|' => 0.26,
            ' ' | 'f' | 't' | 'r' | '(' | ')' | '[' | ']' | '/' | '-' => 0.36,
            'm' | 'w' | 'M' | 'W' => 0.84,
            '0'..='9' => 0.56,
            '\u{2212}' | '+' | '=' | '×' | '<' | '>' => 0.6,
            c if c.is_ascii_uppercase() => 0.66,
            c if c.is_ascii_lowercase() => 0.53,
            _ => 0.62,
        })
        .sum();
    em * size
}

/// Splits `text` into lines no wider than `max_width` px at `size` px, breaking at spaces
/// (a single over-long word stays whole on its own line). At most `max_lines` lines; the last
/// one ends in "…" when text was left out.
pub fn wrap(text: &str, size: f64, max_width: f64, max_lines: usize) -> Vec<String> {
    let mut lines: Vec<String> = Vec::new();
    for para in text.lines() {
        let mut line = String::new();
        for word in para.split_whitespace() {
            let candidate = if line.is_empty() {
                word.to_owned()
            } else {
                format!("{line} {word}")
            };
            if text_width(&candidate, size) <= max_width || line.is_empty() {
                line = candidate;
            } else {
                lines.push(std::mem::replace(&mut line, word.to_owned()));
            }
        }
        if !line.is_empty() {
            lines.push(line);
        }
    }
    if lines.len() > max_lines {
        lines.truncate(max_lines);
        if let Some(last) = lines.last_mut() {
            last.push('…');
        }
    }
    lines
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wider_text_measures_wider() {
        assert!(text_width("mmmm", 12.0) > text_width("iiii", 12.0));
        assert!(text_width("abc", 24.0) > text_width("abc", 12.0));
        assert_eq!(text_width("", 12.0), 0.0);
    }

    #[test]
    fn wrapping_breaks_at_spaces_and_caps_the_line_count() {
        let lines = wrap("one two three four five six seven", 10.0, 60.0, 10);
        assert!(lines.len() > 1);
        assert!(lines.iter().all(|l| !l.starts_with(' ')));
        let capped = wrap("one two three four five six seven", 10.0, 30.0, 2);
        assert_eq!(capped.len(), 2);
        assert!(capped[1].ends_with('…'));
    }
}
