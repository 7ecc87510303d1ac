//! Evaluating a tape at many points at once (direction fields, nullcline contours, sweeps).
//!
//! Points are processed in chunks of up to [`MAX_LANES`] lanes, one operation at a time, so that each
//! operation is a tight loop the compiler vectorises. Per call, the tape is first specialised
//! to the parameters: everything that depends only on parameters and constants is computed
//! once as a scalar, state columns are read in place, and products of a scalar and at most two
//! vectors (`a*x`, `-x`, `alpha*x*y`, `x*y`) are not stored at all but recomputed inside the
//! loop that consumes them, and an operation only an output needs writes straight into it.
//! NOTE: loads and stores, not arithmetic, bound these loops, so skipping the stores of the
//! mass-action terms cuts the passes over memory for typical population rates from 10 to 2.

use super::func::{powi, sign};
use super::tape::{Func, Op, Slot, Tape};

/// Fewest lanes per chunk.
pub(crate) const MIN_LANES: usize = 64;
/// Most lanes per chunk.
pub(crate) const MAX_LANES: usize = 1024;
/// Bytes of scratch rows a chunk may use: half of a typical 32 KiB L1 data cache, leaving room
/// for the state and output columns streaming through.
const CHUNK_BYTES: usize = 16 * 1024;

/// Lanes per chunk for a plan with `rows` scratch rows.
/// NOTE: longer chunks amortise the dispatch of each instruction (tens of cycles) over more
/// lanes, but the rows must stay in L1; short tapes therefore get long chunks.
fn chunk_lanes(rows: usize) -> usize {
    let fit = CHUNK_BYTES / (8 * rows.max(1));
    fit.clamp(MIN_LANES, MAX_LANES) / 8 * 8
}

impl Tape {
    /// Evaluates all outputs at many points stored by column: `state_cols[i][k]` is state
    /// variable `i` at point `k`, and output `j` at point `k` goes to `out_cols[j][k]`.
    ///
    /// The number of points is the shortest column given (state or output); missing state
    /// columns or parameters read NaN. The results are bit-identical to [`Tape::eval`].
    /// Allocates its scratch space once per call.
    pub fn eval_batch(&self, state_cols: &[&[f64]], params: &[f64], out_cols: &mut [&mut [f64]]) {
        let lanes = state_cols
            .iter()
            .map(|c| c.len())
            .chain(out_cols.iter().map(|c| c.len()))
            .min()
            .unwrap_or(0);
        let plan = Plan::new(self, state_cols.len(), params, out_cols.len());
        let chunk = chunk_lanes(plan.rows);
        let mut scratch = vec![0.0; plan.rows * chunk.min(lanes)];
        let mut start = 0;
        while start < lanes {
            let len = chunk.min(lanes - start);
            let end = start + len;
            for ins in &plan.instrs {
                let (done, rest) = match ins.dst {
                    Dst::Row(r) => scratch.split_at_mut(r * len),
                    Dst::Out(_) => (scratch.as_mut_slice(), &mut [][..]),
                };
                let done: &[f64] = done;
                let vector = |v: Vector| match v {
                    Vector::Row(r) => &done[r * len..(r + 1) * len],
                    Vector::Column(c) => &state_cols[c][start..end],
                };
                let src = |a: Arg| match a {
                    Arg::Scalar(v) => Src::Scalar(v),
                    Arg::Vector(v) => Src::Vector(vector(v)),
                    Arg::Scaled(s, v) => Src::Scaled(s, vector(v)),
                    Arg::Product(s, u, v) => Src::Product(s, vector(u), vector(v)),
                };
                let dst = match ins.dst {
                    Dst::Row(_) => &mut rest[..len],
                    Dst::Out(j) => &mut out_cols[j][start..end],
                };
                ins.kind.run(dst, src(ins.a), src(ins.b));
            }
            for (j, out) in plan.outputs.iter().enumerate() {
                let Some(arg) = out else { continue };
                let vector = |v: Vector| match v {
                    Vector::Row(r) => &scratch[r * len..(r + 1) * len],
                    Vector::Column(c) => &state_cols[c][start..end],
                };
                let col = &mut out_cols[j][start..end];
                match *arg {
                    Arg::Scalar(v) => col.fill(v),
                    Arg::Vector(v) => col.copy_from_slice(vector(v)),
                    Arg::Scaled(s, v) => unary(col, Src::Scaled(s, vector(v)), |x| x),
                    Arg::Product(s, u, v) => {
                        unary(col, Src::Product(s, vector(u), vector(v)), |x| x);
                    }
                }
            }
            start = end;
        }
    }
}

/// A vector of lanes: a scratch row or a state column read in place.
#[derive(Clone, Copy, Debug)]
enum Vector {
    Row(usize),
    Column(usize),
}

/// The value of a slot during one call.
#[derive(Clone, Copy, Debug)]
enum Arg {
    /// The same value in every lane.
    Scalar(f64),
    /// Different values per lane.
    Vector(Vector),
    /// `s * v`, computed where it is used.
    Scaled(f64, Vector),
    /// `(s * u) * v`, computed where it is used (`u * v` is `s = 1`, exactly).
    Product(f64, Vector, Vector),
}

#[derive(Clone, Copy, Debug)]
enum Dst {
    Row(usize),
    /// Straight into output column `j` (the slot is used by that output only).
    Out(usize),
}

#[derive(Clone, Copy, Debug, PartialEq)]
enum Kind {
    Add,
    Sub,
    Mul,
    Div,
    Pow,
    Powi(i32),
    Min,
    Max,
    Neg,
    Call(Func),
}

#[derive(Debug)]
struct Instr {
    kind: Kind,
    a: Arg,
    b: Arg,
    dst: Dst,
}

/// A tape specialised to one call's parameters.
struct Plan {
    instrs: Vec<Instr>,
    /// How to fill each output column after the instructions ran (`None`: written directly).
    outputs: Vec<Option<Arg>>,
    rows: usize,
}

impl Plan {
    fn new(tape: &Tape, n_columns: usize, params: &[f64], n_out: usize) -> Plan {
        let n = tape.ops.len();
        // How often each slot is read, by operations and by outputs.
        let mut uses = vec![0usize; n];
        for op in &tape.ops {
            for s in op.operands().into_iter().flatten() {
                if let Some(u) = uses.get_mut(s as usize) {
                    *u += 1;
                }
            }
        }
        let mut sole_output: Vec<Option<usize>> = vec![None; n];
        for (j, &s) in tape.outputs.iter().enumerate().take(n_out) {
            if let Some(u) = uses.get_mut(s as usize) {
                *u += 1;
                sole_output[s as usize] = Some(j);
            }
        }

        let n_state = tape.n_state as usize;
        let mut args: Vec<Arg> = Vec::with_capacity(n);
        let mut instrs = Vec::new();
        let mut rows = 0;
        let mut direct = vec![false; n_out];
        let arg = |args: &[Arg], s: Slot| {
            args.get(s as usize)
                .copied()
                .unwrap_or(Arg::Scalar(f64::NAN))
        };
        for (i, op) in tape.ops.iter().enumerate() {
            let (kind, a, b) = match *op {
                Op::Const(c) => {
                    args.push(Arg::Scalar(c));
                    continue;
                }
                Op::Input(k) => {
                    let k = k as usize;
                    args.push(match (k < n_state, k < n_columns) {
                        (true, true) => Arg::Vector(Vector::Column(k)),
                        (true, false) => Arg::Scalar(f64::NAN),
                        _ => Arg::Scalar(params.get(k - n_state).copied().unwrap_or(f64::NAN)),
                    });
                    continue;
                }
                Op::Add(a, b) => (Kind::Add, a, b),
                Op::Sub(a, b) => (Kind::Sub, a, b),
                Op::Mul(a, b) => (Kind::Mul, a, b),
                Op::Div(a, b) => (Kind::Div, a, b),
                Op::Pow(a, b) => (Kind::Pow, a, b),
                Op::Min(a, b) => (Kind::Min, a, b),
                Op::Max(a, b) => (Kind::Max, a, b),
                Op::Powi(a, n) => (Kind::Powi(n), a, a),
                Op::Neg(a) => (Kind::Neg, a, a),
                Op::Call(f, a) => (Kind::Call(f), a, a),
            };
            let (a, b) = (arg(&args, a), arg(&args, b));
            // Folded or deferred: no instruction.
            let deferred = match (kind, a, b) {
                (_, Arg::Scalar(x), Arg::Scalar(y)) => Some(Arg::Scalar(kind.apply(x, y))),
                (Kind::Mul, Arg::Scalar(s), Arg::Vector(v))
                | (Kind::Mul, Arg::Vector(v), Arg::Scalar(s)) => Some(Arg::Scaled(s, v)),
                // Mass-action terms such as alpha*x*y. Multiplication commutes exactly, and
                // 1*u = u exactly, so u*v is the product with s = 1.
                (Kind::Mul, Arg::Scaled(s, u), Arg::Vector(v))
                | (Kind::Mul, Arg::Vector(v), Arg::Scaled(s, u)) => Some(Arg::Product(s, u, v)),
                (Kind::Mul, Arg::Vector(u), Arg::Vector(v)) => Some(Arg::Product(1.0, u, v)),
                // -(s*v) = (-s)*v and -v = (-1)*v exactly: negation only flips the sign bit.
                (Kind::Neg, Arg::Vector(v), _) => Some(Arg::Scaled(-1.0, v)),
                (Kind::Neg, Arg::Scaled(s, v), _) => Some(Arg::Scaled(-s, v)),
                (Kind::Neg, Arg::Product(s, u, v), _) => Some(Arg::Product(-s, u, v)),
                _ => None,
            };
            if let Some(d) = deferred {
                args.push(d);
                continue;
            }
            let dst = match sole_output[i] {
                Some(j) if uses[i] == 1 => {
                    direct[j] = true;
                    Dst::Out(j)
                }
                _ => {
                    rows += 1;
                    Dst::Row(rows - 1)
                }
            };
            instrs.push(Instr { kind, a, b, dst });
            args.push(match dst {
                Dst::Row(r) => Arg::Vector(Vector::Row(r)),
                // Nothing else reads this slot.
                Dst::Out(_) => Arg::Scalar(f64::NAN),
            });
        }
        let outputs = tape
            .outputs
            .iter()
            .take(n_out)
            .enumerate()
            .map(|(j, &s)| (!direct[j]).then(|| arg(&args, s)))
            .collect();
        Plan {
            instrs,
            outputs,
            rows,
        }
    }
}

/// An operand inside the loop.
#[derive(Clone, Copy)]
enum Src<'a> {
    Scalar(f64),
    Vector(&'a [f64]),
    Scaled(f64, &'a [f64]),
    Product(f64, &'a [f64], &'a [f64]),
}

impl Kind {
    /// The scalar semantics, identical to [`Tape::eval`]'s.
    #[inline(always)]
    fn apply(self, x: f64, y: f64) -> f64 {
        match self {
            Kind::Add => x + y,
            Kind::Sub => x - y,
            Kind::Mul => x * y,
            Kind::Div => x / y,
            Kind::Pow => x.powf(y),
            Kind::Powi(n) => powi(x, n),
            Kind::Min => x.min(y),
            Kind::Max => x.max(y),
            Kind::Neg => -x,
            Kind::Call(f) => f.apply(x),
        }
    }

    fn run(self, dst: &mut [f64], a: Src<'_>, b: Src<'_>) {
        match self {
            Kind::Add => binary(dst, a, b, |x, y| x + y),
            Kind::Sub => binary(dst, a, b, |x, y| x - y),
            Kind::Mul => binary(dst, a, b, |x, y| x * y),
            Kind::Div => binary(dst, a, b, |x, y| x / y),
            Kind::Pow => binary(dst, a, b, f64::powf),
            Kind::Min => binary(dst, a, b, f64::min),
            Kind::Max => binary(dst, a, b, f64::max),
            Kind::Neg => unary(dst, a, |x| -x),
            Kind::Powi(2) => unary(dst, a, |x| x * x),
            Kind::Powi(3) => unary(dst, a, |x| x * x * x),
            Kind::Powi(n) => unary(dst, a, |x| x.powi(n)),
            Kind::Call(Func::Abs) => unary(dst, a, f64::abs),
            Kind::Call(Func::Sqrt) => unary(dst, a, f64::sqrt),
            Kind::Call(Func::Sign) => unary(dst, a, sign),
            Kind::Call(f) => unary(dst, a, |x| f.apply(x)),
        }
    }
}

/// One operand kind, fixed outside the loop so that each combination of kinds is its own
/// monomorphised, vectorisable loop.
trait Lanes: Copy {
    /// Number of lanes available (`usize::MAX` for a scalar).
    fn len(self) -> usize;
    /// The value in lane `k` (`k` below `len`).
    fn at(self, k: usize) -> f64;
}

#[derive(Clone, Copy)]
struct ScalarLanes(f64);
#[derive(Clone, Copy)]
struct VectorLanes<'a>(&'a [f64]);
#[derive(Clone, Copy)]
struct ScaledLanes<'a>(f64, &'a [f64]);
#[derive(Clone, Copy)]
struct ProductLanes<'a>(f64, &'a [f64], &'a [f64]);

impl Lanes for ScalarLanes {
    #[inline(always)]
    fn len(self) -> usize {
        usize::MAX
    }
    #[inline(always)]
    fn at(self, _: usize) -> f64 {
        self.0
    }
}

impl Lanes for VectorLanes<'_> {
    #[inline(always)]
    fn len(self) -> usize {
        self.0.len()
    }
    #[inline(always)]
    fn at(self, k: usize) -> f64 {
        self.0[k]
    }
}

impl Lanes for ScaledLanes<'_> {
    #[inline(always)]
    fn len(self) -> usize {
        self.1.len()
    }
    #[inline(always)]
    fn at(self, k: usize) -> f64 {
        self.0 * self.1[k]
    }
}

impl Lanes for ProductLanes<'_> {
    #[inline(always)]
    fn len(self) -> usize {
        self.1.len().min(self.2.len())
    }
    #[inline(always)]
    fn at(self, k: usize) -> f64 {
        self.0 * self.1[k] * self.2[k]
    }
}

/// Calls `$body` with `$lanes` bound to the [`Lanes`] form of the operand `$src`.
macro_rules! with_lanes {
    ($src:expr, |$lanes:ident| $body:expr) => {
        match $src {
            Src::Scalar(x) => {
                let $lanes = ScalarLanes(x);
                $body
            }
            Src::Vector(x) => {
                let $lanes = VectorLanes(x);
                $body
            }
            Src::Scaled(s, x) => {
                let $lanes = ScaledLanes(s, x);
                $body
            }
            Src::Product(s, x, y) => {
                let $lanes = ProductLanes(s, x, y);
                $body
            }
        }
    };
}

/// `dst[k] = f(a[k], b[k])`.
#[inline(always)]
fn binary(dst: &mut [f64], a: Src<'_>, b: Src<'_>, f: impl Fn(f64, f64) -> f64) {
    with_lanes!(a, |a| with_lanes!(b, |b| binary_loop(dst, a, b, &f)))
}

#[inline(always)]
fn binary_loop(dst: &mut [f64], a: impl Lanes, b: impl Lanes, f: &impl Fn(f64, f64) -> f64) {
    // Bounding the loop by every operand's length lets the compiler drop the bounds checks.
    let n = dst.len().min(a.len()).min(b.len());
    let dst = &mut dst[..n];
    for (k, d) in dst.iter_mut().enumerate() {
        *d = f(a.at(k), b.at(k));
    }
}

/// `dst[k] = f(a[k])`.
#[inline(always)]
fn unary(dst: &mut [f64], a: Src<'_>, f: impl Fn(f64) -> f64) {
    with_lanes!(a, |a| unary_loop(dst, a, &f))
}

#[inline(always)]
fn unary_loop(dst: &mut [f64], a: impl Lanes, f: &impl Fn(f64) -> f64) {
    let n = dst.len().min(a.len());
    let dst = &mut dst[..n];
    for (k, d) in dst.iter_mut().enumerate() {
        *d = f(a.at(k));
    }
}

#[cfg(test)]
mod tests {
    use super::{MAX_LANES, MIN_LANES, chunk_lanes};
    use crate::expr::vm::tests::{PARAMS, points, same, tape};
    use crate::expr::{compile, parse};

    #[test]
    fn eval_batch_matches_eval_bit_for_bit() {
        // Reference: `Tape::eval`, itself checked against the tree walker.
        let tape = tape();
        // Enough points for several chunks of any length, ending in a ragged chunk.
        let pts: Vec<(f64, f64)> = points()
            .into_iter()
            .cycle()
            .take(2 * MAX_LANES + 37)
            .collect();
        let xs: Vec<f64> = pts.iter().map(|p| p.0).collect();
        let ys: Vec<f64> = pts.iter().map(|p| p.1).collect();
        let n_out = tape.outputs.len();
        let mut cols = vec![vec![0.0; pts.len()]; n_out];
        let mut col_refs: Vec<&mut [f64]> = cols.iter_mut().map(|c| c.as_mut_slice()).collect();
        tape.eval_batch(&[&xs, &ys], &PARAMS, &mut col_refs);
        let mut out = vec![0.0; n_out];
        for (k, &(x, y)) in pts.iter().enumerate() {
            tape.eval(&[x, y], &PARAMS, &mut out);
            for j in 0..n_out {
                assert!(same(cols[j][k], out[j]), "output {j} point {k}");
            }
        }
    }

    #[test]
    fn every_operand_kind_combination_agrees_with_eval() {
        // Scalars (parameters), state columns, deferred products (a*x, -y, x*y, a*x*y) and rows,
        // in every pairing, for several operations; plus two outputs sharing one slot and
        // an output that is also an operand.
        let sources = ["a", "x", "a*x", "-y", "x*y", "a*x*y", "-(y*x)", "2"];
        let mut formulas = Vec::new();
        for l in sources {
            for r in sources {
                for op in ["+", "-", "*", "/", "^"] {
                    formulas.push(format!("({l}) {op} ({r})"));
                }
                formulas.push(format!("min({l}, {r})"));
            }
            formulas.push(format!("sin({l})"));
            formulas.push(format!("abs({l})"));
            formulas.push(format!("({l})^2"));
        }
        formulas.push("x*y".to_owned());
        formulas.push("a*x".to_owned());
        let exprs: Vec<_> = formulas
            .iter()
            .map(|f| parse(f).unwrap_or_else(|e| panic!("{f}: {e}")))
            .collect();
        let refs: Vec<_> = exprs.iter().collect();
        let tape = compile(&refs, &["x", "y", "a"], 2).unwrap_or_else(|e| panic!("{e}"));
        let xs: Vec<f64> = (0..300).map(|k| -1.3 + 0.011 * k as f64).collect();
        let ys: Vec<f64> = (0..300).map(|k| 0.7 - 0.007 * k as f64).collect();
        let mut cols = vec![vec![0.0; xs.len()]; refs.len()];
        let mut col_refs: Vec<&mut [f64]> = cols.iter_mut().map(|c| c.as_mut_slice()).collect();
        tape.eval_batch(&[&xs, &ys], &[0.6], &mut col_refs);
        let mut out = vec![0.0; refs.len()];
        for k in 0..xs.len() {
            tape.eval(&[xs[k], ys[k]], &[0.6], &mut out);
            for j in 0..refs.len() {
                assert!(
                    same(cols[j][k], out[j]),
                    "{} at point {k}: {} vs {}",
                    formulas[j],
                    cols[j][k],
                    out[j]
                );
            }
        }
    }

    #[test]
    fn chunks_shrink_for_long_tapes_within_bounds() {
        assert_eq!(chunk_lanes(0), MAX_LANES);
        assert_eq!(chunk_lanes(2), MAX_LANES);
        assert_eq!(chunk_lanes(16), 128);
        assert_eq!(chunk_lanes(10_000), MIN_LANES);
        assert!((1..300).all(|r| chunk_lanes(r).is_multiple_of(8)));
    }

    #[test]
    fn short_columns_and_parameters_never_panic() {
        let tape = tape();
        let xs = [1.0, 2.0];
        let mut c0 = [0.0; 2];
        let mut cols: Vec<&mut [f64]> = vec![&mut c0];
        tape.eval_batch(&[&xs], &[], &mut cols);
        assert!(c0[0].is_nan());
        tape.eval_batch(&[], &[], &mut []);
    }

    #[test]
    fn parameter_only_outputs_fill_the_whole_column() {
        let e = parse("a*2").unwrap_or_else(|e| panic!("{e}"));
        let tape = compile(&[&e], &["x", "a"], 1).unwrap_or_else(|e| panic!("{e}"));
        let xs = [0.0; 5];
        let mut out = [0.0; 5];
        tape.eval_batch(&[&xs], &[3.0], &mut [&mut out]);
        assert_eq!(out, [6.0; 5]);
    }
}
