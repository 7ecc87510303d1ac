//! The flat, compiled form of one or more formulas.
//!
//! A [`Tape`] is a straight-line program in SSA form: operation `i` writes value slot `i`, and
//! every operand refers to an earlier slot. Several formulas (both rates of a model, or a rate
//! and its derivatives) share one tape, so common subexpressions are computed once. The tape is
//! what the interpreter runs and what the JIT (feature `jit`) translates to machine code.

/// Index of a value slot in a [`Tape`]; slot `i` is the result of `ops[i]`.
pub type Slot = u32;

/// A one-argument elementary function.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Func {
    /// `exp(x)`.
    Exp,
    /// Natural logarithm, `ln(x)`.
    Ln,
    /// Base-10 logarithm, `log10(x)`.
    Log10,
    /// `sqrt(x)`.
    Sqrt,
    /// `abs(x)`.
    Abs,
    /// `sin(x)`, radians.
    Sin,
    /// `cos(x)`, radians.
    Cos,
    /// `tan(x)`, radians.
    Tan,
    /// −1, 0 or 1 (0 for ±0 and NaN gives NaN). Internal: appears in derivatives of `abs`, `min`, `max`.
    Sign,
}

/// One operation of a [`Tape`]. Semantics are those of IEEE 754 `f64` (ln of a negative number
/// is NaN, division by zero is ±inf), so evaluation never panics.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Op {
    /// A constant.
    Const(f64),
    /// The `i`-th input: state variables `0..n_state` come first, then parameters.
    Input(u32),
    /// `a + b`.
    Add(Slot, Slot),
    /// `a - b`.
    Sub(Slot, Slot),
    /// `a * b`.
    Mul(Slot, Slot),
    /// `a / b`.
    Div(Slot, Slot),
    /// `-a`.
    Neg(Slot),
    /// `a.powf(b)`.
    Pow(Slot, Slot),
    /// `a.powi(n)` for an integer exponent known at compile time.
    Powi(Slot, i32),
    /// `f(a)`.
    Call(Func, Slot),
    /// `a.min(b)`.
    Min(Slot, Slot),
    /// `a.max(b)`.
    Max(Slot, Slot),
}

/// A compiled straight-line program with one or more outputs.
#[derive(Clone, Debug, PartialEq)]
pub struct Tape {
    /// Operations in evaluation order; operands always refer to earlier slots.
    pub ops: Vec<Op>,
    /// The slots holding each output, in the order the formulas were given.
    pub outputs: Vec<Slot>,
    /// Number of state inputs: `Input(i)` reads `state[i]` for `i < n_state`, else
    /// `params[i - n_state]`.
    pub n_state: u32,
    /// Number of parameter inputs.
    pub n_params: u32,
}

impl Op {
    /// The slots this operation reads (none, one or two).
    pub fn operands(&self) -> [Option<Slot>; 2] {
        match *self {
            Op::Const(_) | Op::Input(_) => [None, None],
            Op::Neg(a) | Op::Powi(a, _) | Op::Call(_, a) => [Some(a), None],
            Op::Add(a, b)
            | Op::Sub(a, b)
            | Op::Mul(a, b)
            | Op::Div(a, b)
            | Op::Pow(a, b)
            | Op::Min(a, b)
            | Op::Max(a, b) => [Some(a), Some(b)],
        }
    }
}
