//! Names and values of the elementary functions, shared by the parser, the printer, the
//! tree-walking evaluator, the constant folder and the tape interpreter so that all of them
//! agree to the last bit.

use super::tape::Func;

/// Largest `|n|` for which an integer exponent known at compile time becomes [`super::Op::Powi`].
///
/// NOTE: `powi` multiplies by repeated squaring, so its error grows like `log2(n)` ulps; 64 keeps
/// that below a handful of ulps while covering every exponent seen in population models.
pub(crate) const POWI_LIMIT: f64 = 64.0;

impl Func {
    /// Every function the parser accepts, in the order they are documented.
    pub const PARSEABLE: [Func; 8] = [
        Func::Exp,
        Func::Ln,
        Func::Log10,
        Func::Sqrt,
        Func::Abs,
        Func::Sin,
        Func::Cos,
        Func::Tan,
    ];

    /// The name used in formulas (`sign` is printed but never parsed).
    pub fn name(self) -> &'static str {
        match self {
            Func::Exp => "exp",
            Func::Ln => "ln",
            Func::Log10 => "log10",
            Func::Sqrt => "sqrt",
            Func::Abs => "abs",
            Func::Sin => "sin",
            Func::Cos => "cos",
            Func::Tan => "tan",
            Func::Sign => "sign",
        }
    }

    /// The parseable function called `name`, if any (never [`Func::Sign`]).
    pub fn from_name(name: &str) -> Option<Func> {
        Func::PARSEABLE.into_iter().find(|f| f.name() == name)
    }

    /// Applies the function to one `f64` with IEEE 754 semantics (never panics).
    #[inline(always)]
    pub fn apply(self, x: f64) -> f64 {
        match self {
            Func::Exp => x.exp(),
            Func::Ln => x.ln(),
            Func::Log10 => x.log10(),
            Func::Sqrt => x.sqrt(),
            Func::Abs => x.abs(),
            Func::Sin => x.sin(),
            Func::Cos => x.cos(),
            Func::Tan => x.tan(),
            Func::Sign => sign(x),
        }
    }

    /// A small dense index, used for hashing and canonical ordering.
    pub(crate) fn index(self) -> u8 {
        match self {
            Func::Exp => 0,
            Func::Ln => 1,
            Func::Log10 => 2,
            Func::Sqrt => 3,
            Func::Abs => 4,
            Func::Sin => 5,
            Func::Cos => 6,
            Func::Tan => 7,
            Func::Sign => 8,
        }
    }
}

/// −1, 0 or 1; 0 for ±0 and NaN for NaN (unlike [`f64::signum`], which gives 1 for +0).
#[inline(always)]
pub(crate) fn sign(x: f64) -> f64 {
    if x > 0.0 {
        1.0
    } else if x < 0.0 {
        -1.0
    } else if x == 0.0 {
        0.0
    } else {
        f64::NAN
    }
}

/// The exponent as an `i32` if `a^n` should be computed by `powi`.
#[inline]
pub(crate) fn powi_exponent(n: f64) -> Option<i32> {
    if n.fract() == 0.0 && n.abs() <= POWI_LIMIT {
        // The range check above makes the cast exact.
        Some(n as i32)
    } else {
        None
    }
}

/// `a^b` as the compiled tape computes it when `b` is a constant: `powi` for small integers.
#[inline]
pub(crate) fn pow_const(a: f64, b: f64) -> f64 {
    match powi_exponent(b) {
        Some(n) => powi(a, n),
        None => a.powf(b),
    }
}

/// `a.powi(n)`, with the squares and cubes spelled out (bit-identical to `powi`, but faster in
/// an interpreter that cannot specialise on `n`).
#[inline(always)]
pub(crate) fn powi(a: f64, n: i32) -> f64 {
    match n {
        2 => a * a,
        3 => a * a * a,
        _ => a.powi(n),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_parseable_function_round_trips_through_its_name() {
        for f in Func::PARSEABLE {
            assert_eq!(Func::from_name(f.name()), Some(f));
        }
        assert_eq!(Func::from_name("sign"), None);
        assert_eq!(Func::from_name("Sin"), None);
    }

    #[test]
    fn sign_follows_the_documented_convention() {
        // Reference: the doc comment of `Func::Sign`.
        assert_eq!(sign(2.5), 1.0);
        assert_eq!(sign(-0.1), -1.0);
        assert_eq!(sign(0.0), 0.0);
        assert_eq!(sign(-0.0), 0.0);
        assert!(sign(f64::NAN).is_nan());
    }

    #[test]
    fn spelled_out_powers_match_powi_bit_for_bit() {
        // Reference: `f64::powi` itself, on awkward values.
        for &a in &[0.1, -3.7, 1.0e-200, 7.123456789, -0.0] {
            assert_eq!(powi(a, 2).to_bits(), a.powi(2).to_bits());
            assert_eq!(powi(a, 3).to_bits(), a.powi(3).to_bits());
        }
    }
}
