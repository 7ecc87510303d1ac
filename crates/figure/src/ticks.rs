//! "Nice" axis ticks: steps of 1, 2 or 5 times a power of ten, and labels written without
//! floating-point noise.
//!
//! Tick values are built as an integer count of the step's mantissa, divided (not multiplied)
//! by a power of ten, so 3 × 0.1 comes out as 0.3 and not 0.30000000000000004. Labels are made
//! from the same integers, so they never show such noise either.

/// Smallest axis range (model units) the renderer will draw as given; narrower ones are widened
/// (see `geometry::sanitize_range`). Keeps every power of ten used here a normal `f64`.
pub const MIN_RANGE: f64 = 1e-300;

/// One tick: its value and how to write it.
#[derive(Clone, Debug, PartialEq)]
pub struct Tick {
    /// Position in model units.
    pub value: f64,
    /// The label.
    pub label: TickLabel,
}

/// A tick label: a plain number, or a mantissa times a power of ten.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct TickLabel {
    /// The digits (with a typographic minus "−" when negative), e.g. "0.25" or "2.5".
    pub mantissa: String,
    /// The power of ten, when the label is scientific ("2.5×10⁻⁴" has mantissa "2.5" and
    /// exponent −4).
    pub exponent: Option<i32>,
}

impl TickLabel {
    /// The label as one plain string, with the exponent in superscript digits
    /// (e.g. "2×10⁻⁴", written with a plain hyphen-minus in the exponent).
    pub fn to_plain_string(&self) -> String {
        match self.exponent {
            None => self.mantissa.clone(),
            Some(e) => format!("{}×10^{}", self.mantissa, e),
        }
    }
}

/// A nice step: `mantissa × 10^exponent` with mantissa 1, 2 or 5.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
struct Step {
    mantissa: i64,
    exponent: i32,
}

impl Step {
    /// The value `k × step`, computed without accumulating rounding error.
    fn times(self, k: i64) -> f64 {
        let c = (k * self.mantissa) as f64;
        if self.exponent >= 0 {
            c * pow10(self.exponent)
        } else {
            c / pow10(-self.exponent)
        }
    }

    fn value(self) -> f64 {
        self.times(1)
    }
}

fn pow10(e: i32) -> f64 {
    10f64.powi(e)
}

/// The smallest nice step (1, 2 or 5 × 10ⁿ) not below `raw`.
fn nice_step(raw: f64) -> Option<Step> {
    if !(raw.is_finite() && raw > 0.0) {
        return None;
    }
    let mut exponent = raw.log10().floor() as i32;
    // NOTE: log10 can land one off near exact powers of ten; nudge until 10^e ≤ raw < 10^(e+1).
    while pow10(exponent) > raw * (1.0 + 1e-12) {
        exponent -= 1;
    }
    while pow10(exponent + 1) <= raw * (1.0 - 1e-12) {
        exponent += 1;
    }
    for mantissa in [1, 2, 5, 10] {
        let step = Step { mantissa, exponent };
        if step.value() >= raw * (1.0 - 1e-9) {
            return Some(if mantissa == 10 {
                Step {
                    mantissa: 1,
                    exponent: exponent + 1,
                }
            } else {
                step
            });
        }
    }
    None
}

/// Tick values across `[lo, hi]`, about `target` of them (at least two where the range allows),
/// at a 1–2–5 step. Empty when the range is not finite, not increasing, or narrower than
/// [`MIN_RANGE`].
///
/// ```
/// let t = quarry_figure::ticks::nice_ticks(0.0, 60.0, 7);
/// assert_eq!(t, vec![0.0, 10.0, 20.0, 30.0, 40.0, 50.0, 60.0]);
/// ```
pub fn nice_ticks(lo: f64, hi: f64, target: usize) -> Vec<f64> {
    ticks(lo, hi, target).into_iter().map(|t| t.value).collect()
}

/// Ticks across `[lo, hi]` with their labels; see [`nice_ticks`].
///
/// Labels are plain numbers while the values stay below 10⁶ in size and the step needs at most
/// four decimals; otherwise every label is scientific.
pub fn ticks(lo: f64, hi: f64, target: usize) -> Vec<Tick> {
    let range = hi - lo;
    if !(lo.is_finite() && hi.is_finite() && range.is_finite() && range >= MIN_RANGE) {
        return Vec::new();
    }
    let target = target.clamp(2, 50);
    let Some(step) = nice_step(range / target as f64) else {
        return Vec::new();
    };
    let s = step.value();
    let k_lo = (lo / s - 1e-9).ceil();
    let k_hi = (hi / s + 1e-9).floor();
    // NOTE: a range tiny against its offset (1e6 to 1e6 + 1e-9) would need k beyond i64's
    // exact range; such a range has no meaningful ticks.
    if !(k_lo.is_finite() && k_hi.is_finite()) || k_lo.abs() > 1e15 || k_hi.abs() > 1e15 {
        return Vec::new();
    }
    let (k_lo, k_hi) = (k_lo as i64, k_hi as i64);
    if k_hi < k_lo || k_hi - k_lo > 200 {
        return Vec::new();
    }
    let max_abs = step.times(k_lo.abs().max(k_hi.abs()));
    let plain = step.exponent >= -4 && max_abs < 1e6;
    (k_lo..=k_hi)
        .map(|k| Tick {
            value: step.times(k),
            label: if plain {
                plain_label(k * step.mantissa, step.exponent)
            } else {
                scientific_label(k * step.mantissa, step.exponent)
            },
        })
        .collect()
}

/// `c × 10^e` written plainly with exactly `max(0, −e)` decimals (so zero on a 0.5 step is
/// "0.0", matching its neighbours).
fn plain_label(c: i64, e: i32) -> TickLabel {
    let neg = c < 0;
    let mut digits = c.unsigned_abs().to_string();
    if e > 0 && c != 0 {
        digits.extend(std::iter::repeat_n('0', e as usize));
    } else if e < 0 {
        let decimals = (-e) as usize;
        if digits.len() <= decimals {
            let pad = decimals + 1 - digits.len();
            digits.insert_str(0, &"0".repeat(pad));
        }
        digits.insert(digits.len() - decimals, '.');
    }
    TickLabel {
        mantissa: with_sign(neg && c != 0, digits),
        exponent: None,
    }
}

/// `c × 10^e` as "m.mmm×10ⁿ" with trailing zeros of the mantissa dropped; 0 stays "0".
fn scientific_label(c: i64, e: i32) -> TickLabel {
    if c == 0 {
        return TickLabel {
            mantissa: "0".into(),
            exponent: None,
        };
    }
    let neg = c < 0;
    let digits = c.unsigned_abs().to_string();
    let exponent = e + digits.len() as i32 - 1;
    let (first, rest) = digits.split_at(1);
    let rest = rest.trim_end_matches('0');
    let mantissa = if rest.is_empty() {
        first.to_owned()
    } else {
        format!("{first}.{rest}")
    };
    TickLabel {
        mantissa: with_sign(neg, mantissa),
        exponent: Some(exponent),
    }
}

fn with_sign(neg: bool, digits: String) -> String {
    if neg {
        format!("\u{2212}{digits}")
    } else {
        digits
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn labels(lo: f64, hi: f64, n: usize) -> Vec<String> {
        ticks(lo, hi, n)
            .iter()
            .map(|t| t.label.to_plain_string())
            .collect()
    }

    #[test]
    fn zero_to_sixty_steps_by_ten() {
        assert_eq!(
            nice_ticks(0.0, 60.0, 7),
            vec![0.0, 10.0, 20.0, 30.0, 40.0, 50.0, 60.0]
        );
        assert_eq!(
            labels(0.0, 60.0, 7),
            ["0", "10", "20", "30", "40", "50", "60"]
        );
    }

    #[test]
    fn zero_to_a_thousandth_is_plain_with_four_decimals() {
        let t = nice_ticks(0.0, 1e-3, 5);
        assert_eq!(t, vec![0.0, 2e-4, 4e-4, 6e-4, 8e-4, 1e-3]);
        assert_eq!(
            labels(0.0, 1e-3, 5),
            ["0.0000", "0.0002", "0.0004", "0.0006", "0.0008", "0.0010"]
        );
    }

    #[test]
    fn symmetric_range_has_zero_and_typographic_minus() {
        assert_eq!(
            nice_ticks(-3.0, 3.0, 6),
            vec![-3.0, -2.0, -1.0, 0.0, 1.0, 2.0, 3.0]
        );
        let l = labels(-3.0, 3.0, 6);
        assert_eq!(l[0], "\u{2212}3");
        assert_eq!(l[3], "0");
    }

    #[test]
    fn float_noise_never_reaches_values_or_labels() {
        let t = nice_ticks(0.1, 0.30000000000000004, 5);
        assert_eq!(t, vec![0.1, 0.15, 0.2, 0.25, 0.3]);
        assert_eq!(
            labels(0.1, 0.30000000000000004, 5),
            ["0.10", "0.15", "0.20", "0.25", "0.30"]
        );
        for v in nice_ticks(0.0, 1.0, 10) {
            assert!(format!("{v}").len() <= 3, "{v}");
        }
    }

    #[test]
    fn tiny_and_huge_ranges_go_scientific() {
        let l = labels(0.0, 1e-300, 5);
        assert_eq!(l.first().map(String::as_str), Some("0"));
        assert_eq!(l.last().map(String::as_str), Some("1×10^-300"));
        let l = labels(0.0, 5e6, 5);
        assert_eq!(l[1], "1×10^6");
        let l = labels(0.0, 2.5e7, 5);
        assert_eq!(l[1], "5×10^6");
    }

    #[test]
    fn degenerate_ranges_give_no_ticks() {
        assert!(nice_ticks(1.0, 1.0, 5).is_empty());
        assert!(nice_ticks(2.0, 1.0, 5).is_empty());
        assert!(nice_ticks(f64::NAN, 1.0, 5).is_empty());
        assert!(nice_ticks(0.0, f64::INFINITY, 5).is_empty());
        assert!(nice_ticks(-1e308, 1e308, 5).is_empty());
        assert!(nice_ticks(0.0, 1e-310, 5).is_empty());
    }

    #[test]
    fn tick_count_follows_the_target() {
        for target in 2..=12 {
            let n = nice_ticks(0.0, 37.0, target).len();
            assert!(n >= 2 && n <= 2 * target + 2, "target {target}: {n}");
        }
    }
}
