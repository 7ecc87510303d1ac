//! Compiled formulas: a [`Tape`] plus, where the host supports it, native code made from it.
//!
//! Callers ask for an evaluation and get the fastest backend that is available; the tape
//! interpreter is always there as the fallback and as the reference the JIT is tested against.

use std::sync::Arc;

use crate::expr::{self, CompileError, Expr, tape::Tape};

/// Which evaluator [`Formulas`] may use.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub enum Backend {
    /// Native code through the JIT when it is compiled in and supports the host, else the
    /// interpreter.
    #[default]
    Auto,
    /// Always the tape interpreter (for benchmarks and cross-checks).
    Interpreter,
}

/// One or more formulas compiled into a shared program over the same inputs.
#[derive(Clone)]
pub struct Formulas {
    tape: Arc<Tape>,
    #[cfg(feature = "jit")]
    jit: Option<Arc<expr::jit::JitFunction>>,
}

impl std::fmt::Debug for Formulas {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Formulas")
            .field("ops", &self.tape.ops.len())
            .field("outputs", &self.tape.outputs.len())
            .field("native", &self.is_native())
            .finish()
    }
}

impl Formulas {
    /// Compiles `exprs` over `inputs` (the first `n_state` are state variables, the rest
    /// parameters).
    pub fn compile(
        exprs: &[&Expr],
        inputs: &[&str],
        n_state: usize,
        backend: Backend,
    ) -> Result<Self, CompileError> {
        let tape = expr::compile(exprs, inputs, n_state)?;
        #[cfg(feature = "jit")]
        let jit = match backend {
            // A host the JIT cannot serve still works, only slower: fall back silently.
            Backend::Auto => expr::jit::JitFunction::compile(&tape).ok().map(Arc::new),
            Backend::Interpreter => None,
        };
        #[cfg(not(feature = "jit"))]
        let _ = backend;
        Ok(Self {
            tape: Arc::new(tape),
            #[cfg(feature = "jit")]
            jit,
        })
    }

    /// Evaluates every output at one point.
    #[inline]
    pub fn eval(&self, state: &[f64], params: &[f64], out: &mut [f64]) {
        #[cfg(feature = "jit")]
        if let Some(jit) = &self.jit {
            jit.eval(state, params, out);
            return;
        }
        self.tape.eval(state, params, out);
    }

    /// Evaluates a program with two state inputs and two outputs (a model's rates) at (x, y).
    ///
    /// Through the JIT this passes the state and the result in registers, which inside an
    /// integration loop is about twice as fast as going through memory as [`Formulas::eval`]
    /// does.
    #[inline]
    pub fn eval_planar(&self, x: f64, y: f64, params: &[f64]) -> [f64; 2] {
        #[cfg(feature = "jit")]
        if let Some(jit) = &self.jit
            && let Some(rates) = jit.planar(params)
        {
            return rates.eval(x, y);
        }
        let mut out = [0.0; 2];
        self.eval(&[x, y], params, &mut out);
        out
    }

    /// Evaluates every output at many points, column-major (see [`Tape::eval_batch`]).
    pub fn eval_batch(&self, state_cols: &[&[f64]], params: &[f64], out_cols: &mut [&mut [f64]]) {
        self.tape.eval_batch(state_cols, params, out_cols);
    }

    /// Number of outputs.
    pub fn n_outputs(&self) -> usize {
        self.tape.outputs.len()
    }

    /// Whether evaluation runs native code rather than the interpreter.
    pub fn is_native(&self) -> bool {
        #[cfg(feature = "jit")]
        return self.jit.is_some();
        #[cfg(not(feature = "jit"))]
        false
    }

    /// The underlying program.
    pub fn tape(&self) -> &Tape {
        &self.tape
    }
}
