//! The tape interpreter: the reference for the JIT and the fallback when it is unavailable.
//!
//! [`Tape::eval`] runs one point with a `match` per operation over a stack buffer; the
//! many-points form is in `batch.rs`.

use super::func::powi;
use super::tape::{Op, Slot, Tape};

/// Tapes up to this many operations run from a small stack buffer.
const SMALL: usize = 32;
/// Tapes up to this many operations run from a larger stack buffer; longer ones use a `Vec`.
const MEDIUM: usize = 256;

/// Value slots of one evaluation.
trait Slots {
    fn get(&self, s: Slot) -> f64;
    fn set(&mut self, i: usize, v: f64);
}

/// A stack buffer whose length is a power of two: indices are masked, so there is neither a
/// bounds check nor a panic path in the interpreter loop. For tapes from `compile` with at
/// most `N` operations the mask never changes an index (operands precede their use); a
/// malformed tape reads wrong values but stays memory-safe.
impl<const N: usize> Slots for [f64; N] {
    #[inline(always)]
    fn get(&self, s: Slot) -> f64 {
        self[s as usize & (N - 1)]
    }
    #[inline(always)]
    fn set(&mut self, i: usize, v: f64) {
        self[i & (N - 1)] = v;
    }
}

/// The heap fallback for long tapes: an out-of-range operand reads NaN.
impl Slots for Vec<f64> {
    #[inline(always)]
    fn get(&self, s: Slot) -> f64 {
        match self.as_slice().get(s as usize) {
            Some(v) => *v,
            None => f64::NAN,
        }
    }
    #[inline(always)]
    fn set(&mut self, i: usize, v: f64) {
        if let Some(slot) = self.get_mut(i) {
            *slot = v;
        }
    }
}

const _: () = assert!(SMALL.is_power_of_two() && MEDIUM.is_power_of_two());

impl Tape {
    /// Number of operations.
    pub fn len(&self) -> usize {
        self.ops.len()
    }

    /// Whether the tape has no operations (it then has no outputs either).
    pub fn is_empty(&self) -> bool {
        self.ops.is_empty()
    }

    /// Evaluates all outputs at one point, writing output `j` to `out[j]`.
    ///
    /// Missing inputs (a `state` or `params` slice shorter than the tape expects) read NaN;
    /// extra outputs beyond `out.len()` are not written. Does not allocate for tapes of up to
    /// 256 operations.
    pub fn eval(&self, state: &[f64], params: &[f64], out: &mut [f64]) {
        let n = self.ops.len();
        if n <= SMALL {
            self.run(&mut [0.0; SMALL], state, params, out);
        } else if n <= MEDIUM {
            self.run(&mut [0.0; MEDIUM], state, params, out);
        } else {
            self.run(&mut vec![0.0; n], state, params, out);
        }
    }

    #[inline(always)]
    fn input(&self, i: u32, state: &[f64], params: &[f64]) -> f64 {
        let i = i as usize;
        let n_state = self.n_state as usize;
        let v = if i < n_state {
            state.get(i)
        } else {
            params.get(i - n_state)
        };
        v.copied().unwrap_or(f64::NAN)
    }

    #[inline(always)]
    fn run(&self, vals: &mut impl Slots, state: &[f64], params: &[f64], out: &mut [f64]) {
        for (i, op) in self.ops.iter().enumerate() {
            let v = match *op {
                Op::Const(c) => c,
                Op::Input(k) => self.input(k, state, params),
                Op::Add(a, b) => vals.get(a) + vals.get(b),
                Op::Sub(a, b) => vals.get(a) - vals.get(b),
                Op::Mul(a, b) => vals.get(a) * vals.get(b),
                Op::Div(a, b) => vals.get(a) / vals.get(b),
                Op::Neg(a) => -vals.get(a),
                Op::Pow(a, b) => vals.get(a).powf(vals.get(b)),
                Op::Powi(a, n) => powi(vals.get(a), n),
                Op::Call(f, a) => f.apply(vals.get(a)),
                Op::Min(a, b) => vals.get(a).min(vals.get(b)),
                Op::Max(a, b) => vals.get(a).max(vals.get(b)),
            };
            vals.set(i, v);
        }
        for (o, &s) in out.iter_mut().zip(&self.outputs) {
            // An output slot beyond the tape would alias under the mask; read NaN instead.
            *o = if (s as usize) < self.ops.len() {
                vals.get(s)
            } else {
                f64::NAN
            };
        }
    }
}

#[cfg(test)]
pub(crate) mod tests {
    use crate::expr::{Expr, Tape, compile, parse};

    fn p(s: &str) -> Expr {
        parse(s).unwrap_or_else(|e| panic!("{s}: {e}"))
    }

    const NAMES: [&str; 6] = ["x", "y", "a", "alpha", "c", "gamma"];
    pub(crate) const PARAMS: [f64; 4] = [1.1, 0.4, 0.9, 0.3];

    fn formulas() -> Vec<Expr> {
        [
            "a*x - alpha*x*y",
            "-c*y + gamma*x*y",
            "x^2 - y^3 + x^-1 + x^y + 2^x + (x*y)^0.5",
            "exp(-x) + ln(y) + log10(x + y) + sqrt(x) + abs(y - x) + sin(x) + cos(y) + tan(x*y)",
            "min(x, y)*max(a, y) - min(alpha, c)/max(gamma, 1e-3)",
            "a*alpha - c^2 + pi*e",
            "x/(y - y)",
            "3",
        ]
        .iter()
        .map(|s| p(s))
        .chain([
            p("abs(x - y)").derivative("x"),
            p("x/y").derivative("y").derivative("y"),
        ])
        .collect()
    }

    pub(crate) fn tape() -> Tape {
        let owned = formulas();
        let refs: Vec<&Expr> = owned.iter().collect();
        compile(&refs, &NAMES, 2).unwrap_or_else(|e| panic!("{e}"))
    }

    pub(crate) fn same(a: f64, b: f64) -> bool {
        a.to_bits() == b.to_bits() || (a.is_nan() && b.is_nan())
    }

    pub(crate) fn points() -> Vec<(f64, f64)> {
        let mut v = Vec::new();
        for i in 0..23 {
            for j in 0..17 {
                v.push((-1.5 + 0.17 * i as f64, -0.9 + 0.13 * j as f64));
            }
        }
        v.push((0.0, 0.0));
        v.push((f64::NAN, 1.0));
        v
    }

    #[test]
    fn tape_eval_matches_the_tree_walker_bit_for_bit() {
        // Reference: `Expr::eval_with`, the tree-walking definition of the language.
        let exprs = formulas();
        let tape = tape();
        let mut out = vec![0.0; exprs.len()];
        for (x, y) in points() {
            tape.eval(&[x, y], &PARAMS, &mut out);
            for (e, &v) in exprs.iter().zip(&out) {
                let lookup = |n: &str| {
                    let i = NAMES.iter().position(|m| *m == n)?;
                    Some(if i < 2 { [x, y][i] } else { PARAMS[i - 2] })
                };
                let w = e.eval_with(&lookup);
                assert!(same(v, w), "{e} at ({x}, {y}): tape {v}, tree {w}");
            }
        }
    }

    #[test]
    fn long_tapes_fall_back_to_the_heap_and_agree() {
        // A sum of 300 distinct terms needs more than 256 slots; groups of 50 in parentheses
        // keep the tree below the parser's height limit.
        let groups: Vec<String> = (0..6)
            .map(|g| {
                let terms: Vec<String> = (1..=50)
                    .map(|k| format!("x^{}*{}", k % 7, 50 * g + k))
                    .collect();
                format!("({})", terms.join(" + "))
            })
            .collect();
        let e = p(&groups.join(" + "));
        let tape = compile(&[&e], &["x"], 1).unwrap_or_else(|e| panic!("{e}"));
        assert!(tape.len() > super::MEDIUM);
        let mut out = [0.0];
        tape.eval(&[0.9], &[], &mut out);
        let w = e.eval_with(&|_| Some(0.9));
        assert!(same(out[0], w));
    }

    #[test]
    fn short_inputs_read_nan_and_never_panic() {
        let tape = tape();
        let mut out = vec![0.0; tape.outputs.len()];
        tape.eval(&[1.0], &[], &mut out);
        assert!(out[0].is_nan());
        let mut short = [0.0; 1];
        tape.eval(&[1.0, 2.0], &PARAMS, &mut short);
        let empty = compile(&[], &[], 0).unwrap_or_else(|e| panic!("{e}"));
        assert!(empty.is_empty());
        empty.eval(&[], &[], &mut []);
    }
}
