//! Text measurement without a font engine: the advance widths of the bundled font (Ubuntu
//! Light, the one resvg draws the PNGs with), read straight from its `cmap` and `hmtx`
//! tables, and line wrapping built on them.
//!
//! A browser showing a standalone SVG may use another, wider sans-serif. Text whose room the
//! layout measured (legend entries, captions, marker labels) therefore carries its measured
//! length ([`fit_attrs`]): with the bundled font that changes nothing, with another font the
//! words are squeezed or stretched to the same length, so they keep to their box.

use std::sync::OnceLock;

use crate::svg::num;

/// The advance widths of a TrueType font.
struct FontMetrics {
    data: &'static [u8],
    /// Offset of the Unicode `cmap` subtable (format 4 or 12) and its format.
    cmap: (usize, u16),
    /// Offset of `hmtx`.
    hmtx: usize,
    /// Entries of `hmtx` with their own advance.
    long_metrics: usize,
    /// Font units per em.
    units_per_em: f64,
}

fn u16_at(d: &[u8], at: usize) -> Option<u16> {
    Some(u16::from_be_bytes([*d.get(at)?, *d.get(at + 1)?]))
}

fn u32_at(d: &[u8], at: usize) -> Option<u32> {
    Some(u32::from_be_bytes([
        *d.get(at)?,
        *d.get(at + 1)?,
        *d.get(at + 2)?,
        *d.get(at + 3)?,
    ]))
}

impl FontMetrics {
    /// Reads the tables needed; `None` when the font is not a TrueType font we can read.
    fn parse(data: &'static [u8]) -> Option<Self> {
        let tables = usize::from(u16_at(data, 4)?);
        let table = |tag: &[u8; 4]| -> Option<usize> {
            (0..tables).find_map(|i| {
                let rec = 12 + 16 * i;
                (data.get(rec..rec + 4)? == tag).then_some(())?;
                usize::try_from(u32_at(data, rec + 8)?).ok()
            })
        };
        let head = table(b"head")?;
        let hhea = table(b"hhea")?;
        let hmtx = table(b"hmtx")?;
        let cmap = table(b"cmap")?;
        let units_per_em = f64::from(u16_at(data, head + 18)?);
        let long_metrics = usize::from(u16_at(data, hhea + 34)?);
        // The Unicode subtable: format 12 (full range) before format 4 (the basic plane).
        let mut best: Option<(usize, u16)> = None;
        for i in 0..usize::from(u16_at(data, cmap + 2)?) {
            let rec = cmap + 4 + 8 * i;
            let (platform, encoding) = (u16_at(data, rec)?, u16_at(data, rec + 2)?);
            let unicode = platform == 0 || (platform == 3 && (encoding == 1 || encoding == 10));
            let at = cmap + usize::try_from(u32_at(data, rec + 4)?).ok()?;
            let format = u16_at(data, at)?;
            if unicode && (format == 12 || (format == 4 && best.is_none())) {
                best = Some((at, format));
            }
        }
        (units_per_em > 0.0 && long_metrics > 0).then_some(Self {
            data,
            cmap: best?,
            hmtx,
            long_metrics,
            units_per_em,
        })
    }

    /// The glyph for `c`, `None` when the font has none.
    fn glyph(&self, c: char) -> Option<u16> {
        let (d, (at, format)) = (self.data, self.cmap);
        let c = u32::from(c);
        let g = if format == 12 {
            let groups = usize::try_from(u32_at(d, at + 12)?).ok()?;
            (0..groups).find_map(|i| {
                let g = at + 16 + 12 * i;
                let (first, last) = (u32_at(d, g)?, u32_at(d, g + 4)?);
                (first..=last)
                    .contains(&c)
                    .then(|| u32_at(d, g + 8).map(|start| start + (c - first)))?
            })?
        } else {
            let c = u16::try_from(c).ok()?;
            let seg_x2 = usize::from(u16_at(d, at + 6)?);
            let ends = at + 14;
            let i = (0..seg_x2 / 2).find(|i| u16_at(d, ends + 2 * i).is_some_and(|e| e >= c))?;
            let start_at = ends + seg_x2 + 2 + 2 * i;
            let start = u16_at(d, start_at)?;
            if start > c {
                return None;
            }
            let delta = u16_at(d, start_at + seg_x2)?;
            let range_at = start_at + 2 * seg_x2;
            let range = usize::from(u16_at(d, range_at)?);
            let raw = if range == 0 {
                c
            } else {
                match u16_at(d, range_at + range + 2 * usize::from(c - start))? {
                    0 => return None,
                    g => g,
                }
            };
            u32::from(raw.wrapping_add(delta))
        };
        u16::try_from(g).ok().filter(|&g| g != 0)
    }

    /// Advance width of `c` in em, `None` when the font has no glyph for it.
    fn advance_em(&self, c: char) -> Option<f64> {
        let g = usize::from(self.glyph(c)?);
        let entry = g.min(self.long_metrics - 1);
        Some(f64::from(u16_at(self.data, self.hmtx + 4 * entry)?) / self.units_per_em)
    }
}

/// The bundled font's metrics, read once.
fn metrics() -> Option<&'static FontMetrics> {
    static METRICS: OnceLock<Option<FontMetrics>> = OnceLock::new();
    METRICS
        .get_or_init(|| FontMetrics::parse(epaint_default_fonts::UBUNTU_LIGHT))
        .as_ref()
}

/// A character's width (em) by its class in a humanist sans-serif, on the wide side: for
/// characters the font lacks.
fn estimate_em(c: char) -> f64 {
    match c {
        'i' | 'j' | 'l' | '.' | ',' | ':' | ';' | '\'' | '!' | '|' => 0.26,
        ' ' | 'f' | 't' | 'r' | '(' | ')' | '[' | ']' | '/' | '-' => 0.36,
        'm' | 'w' | 'M' | 'W' => 0.84,
        '0'..='9' => 0.56,
        '\u{2212}' | '+' | '=' | '×' | '<' | '>' => 0.6,
        c if c.is_ascii_uppercase() => 0.66,
        c if c.is_ascii_lowercase() => 0.53,
        _ => 0.62,
    }
}

/// Width (px) of `text` at `size` px in the bundled font (control characters, which the SVG
/// writer drops, count nothing).
pub fn text_width(text: &str, size: f64) -> f64 {
    let m = metrics();
    let em: f64 = text
        .chars()
        .filter(|c| !c.is_control() || *c == '\t')
        .map(|c| {
            let c = if c == '\t' { ' ' } else { c };
            m.and_then(|m| m.advance_em(c))
                .unwrap_or_else(|| estimate_em(c))
        })
        .sum();
    em * size
}

/// Width (px) of `text` at `size` px drawn with `spacing` px of letter spacing.
pub fn spaced_width(text: &str, size: f64, spacing: f64) -> f64 {
    text_width(text, size) + spacing * text.chars().count() as f64
}

/// ` textLength="…" lengthAdjust="spacingAndGlyphs"` for text whose room was measured as
/// `width` px: a browser with a wider or narrower font than the bundled one draws the text to
/// exactly that length. Nothing for empty text.
pub fn fit_length(width: f64) -> String {
    if width > 0.0 && width.is_finite() {
        format!(
            " textLength=\"{}\" lengthAdjust=\"spacingAndGlyphs\"",
            num(width)
        )
    } else {
        String::new()
    }
}

/// [`fit_length`] for `text` at `size` px.
pub fn fit_attrs(text: &str, size: f64) -> String {
    fit_length(text_width(text, size))
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

/// A number for a label: about four significant digits, no trailing zeros, a true minus sign.
pub fn short_number(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{}", if v == 0.0 { 0.0 } else { v });
    }
    let digits = (3 - v.abs().log10().floor() as i32).clamp(0, 8) as usize;
    let s = format!("{v:.digits$}");
    let s = if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.')
    } else {
        s.as_str()
    };
    s.replace('-', "\u{2212}")
}

/// `name` trimmed, or `default` when it is blank.
pub fn name_or(name: &str, default: &str) -> String {
    let name = name.trim();
    if name.is_empty() {
        default.to_owned()
    } else {
        name.to_owned()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The width of the box resvg gives `text` laid out at `size` px in the bundled font,
    /// with `attrs` added to the text element.
    fn resvg_width(text: &str, size: f64, attrs: &str) -> f64 {
        let svg = format!(
            "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"4000\" height=\"200\"><text x=\"10\" y=\"150\" font-family=\"Ubuntu\" font-size=\"{size}\"{attrs}>{}</text></svg>",
            crate::svg::escape(text)
        );
        let tree = crate::raster::parse(&svg).expect("parses");
        f64::from(tree.root().abs_bounding_box().width())
    }

    #[test]
    fn widths_match_what_resvg_draws() {
        // Reference: resvg's own text layout (shaping with kerning) of the same font; the sum
        // of advances may differ from it by kerning, a few thousandths of the width.
        let size = 100.0;
        for text in [
            "iiiiiiiiiiiiiiiiiiii",
            "MMMMMMMMMMMMMMMMMMMM",
            "level curves of the conserved quantity",
            "equilibrium catch (= revenue ÷ price)",
            "0123456789 −1.5×10",
            "EQUILIBRIA",
        ] {
            let ours = text_width(text, size);
            let drawn = resvg_width(text, size, "");
            assert!(
                (ours - drawn).abs() < 0.01 * drawn + 0.05 * size,
                "{text}: measured {ours:.1} px, resvg draws {drawn:.1} px"
            );
        }
    }

    #[test]
    fn measured_text_keeps_its_length_in_resvg() {
        // With the bundled font textLength is the natural length, so resvg neither squeezes
        // nor stretches the words: the ink is as wide with the attribute as without it.
        let size = 40.0;
        let text = "separatrix out of a saddle";
        let plain = resvg_width(text, size, "");
        let fitted = resvg_width(text, size, &fit_attrs(text, size));
        assert!(
            (fitted / plain - 1.0).abs() < 0.015,
            "plain {plain:.1} px, with textLength {fitted:.1} px"
        );
        // A length half as long does squeeze it (the attribute is honoured).
        let half = resvg_width(text, size, &fit_length(0.5 * text_width(text, size)));
        assert!(
            (half / plain - 0.5).abs() < 0.05,
            "{half:.1} against {plain:.1}"
        );
    }

    #[test]
    fn wider_text_measures_wider() {
        assert!(text_width("mmmm", 12.0) > text_width("iiii", 12.0));
        assert!(text_width("abc", 24.0) > text_width("abc", 12.0));
        assert_eq!(text_width("", 12.0), 0.0);
    }

    #[test]
    fn label_numbers_are_short() {
        assert_eq!(short_number(10.0), "10");
        assert_eq!(short_number(0.123456), "0.1235");
        assert_eq!(short_number(-2.5), "\u{2212}2.5");
        assert_eq!(short_number(12345.678), "12346");
        assert_eq!(short_number(-0.0), "0");
    }

    #[test]
    fn blank_names_fall_back() {
        assert_eq!(name_or("  prey ", "x"), "prey");
        assert_eq!(name_or(" ", "x"), "x");
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
