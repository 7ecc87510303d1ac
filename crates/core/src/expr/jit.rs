//! Native code for a [`Tape`], generated with Cranelift.
//!
//! Integrating one orbit evaluates the rates of a model tens of thousands of times, so the cost
//! of one evaluation is what the user feels. The tape interpreter pays for dispatch on every
//! operation; this module instead translates the whole tape once into a straight-line machine
//! function
//!
//! ```text
//! extern "C" fn(state: *const f64, params: *const f64, out: *mut f64)
//! ```
//!
//! and [`JitFunction::eval`] calls it. For a planar model (two state variables, two rates) a
//! second entry point takes `x`, `y` and returns both rates in registers; bound to its
//! parameters by [`JitFunction::planar`], it is what an integrator's inner loop should call,
//! because passing the state and rates through memory costs more than the arithmetic of a
//! typical model (see `benches/jit.rs`).
//!
//! # Semantics
//!
//! The generated code computes what Rust's `f64` computes:
//!
//! - `+ − × ÷`, negation, `abs` and `sqrt` are single IEEE 754 instructions, bit-identical to
//!   Rust's operators and `f64::abs` / `f64::sqrt`.
//! - `powf`, `exp`, `ln`, `log10`, `sin`, `cos` and `tan` call small `extern "C"` wrappers around
//!   the `f64` methods, so their results are those of the interpreter, ulp for ulp.
//! - `min` and `max` follow `f64::min` / `f64::max`: when exactly one operand is NaN the other is
//!   returned. They are a compare and a select (no call). When both operands are zero of
//!   different signs the first operand is returned; `f64` does not promise which zero it returns.
//! - `sign` is `1` for positive numbers (and `+inf`), `−1` for negative ones, `+0` for `±0`, and
//!   NaN for NaN.
//! - `powi(x, n)` with `|n| ≤` [`MAX_INLINE_POWI`] is multiplication by repeated squaring (and a
//!   final reciprocal for negative `n`). The sequence of products is the one the runtime
//!   `f64::powi` uses, so results agree with it in practice; `f64::powi` does not document its
//!   precision, and a compiler is free to expand constant powers differently, so only agreement
//!   to about one ulp is promised. Larger exponents call a wrapper around `f64::powi`.
//!
//! NaN results may differ from the interpreter in their payload bits, never in being NaN.
//!
//! # Safety of the generated code
//!
//! The tape is validated before code generation ([`JitError::InvalidOperand`],
//! [`JitError::InputOutOfRange`], [`JitError::OutputOutOfRange`]): every operand names an
//! earlier slot, every input lies within `n_state + n_params`, and every output names a slot. The
//! generated code therefore reads exactly `state[..n_state]`, `params[..n_params]` and writes
//! exactly `out[..n_outputs]`, which [`JitFunction::eval`] checks against the slice lengths.

use std::mem::ManuallyDrop;

use cranelift_codegen::ir::condcodes::FloatCC;
use cranelift_codegen::ir::{
    AbiParam, FuncRef, InstBuilder, MemFlagsData, Signature, Value, types,
};
use cranelift_codegen::isa::CallConv;
use cranelift_codegen::settings::{self, Configurable};
use cranelift_codegen::{Context, ir};
use cranelift_frontend::{FunctionBuilder, FunctionBuilderContext};
use cranelift_jit::{JITBuilder, JITModule};
use cranelift_module::{FuncId, Linkage, Module, default_libcall_names};

use super::tape::{Func, Op, Slot, Tape};

/// Largest `|n|` for which `powi(x, n)` is expanded inline into multiplications; larger
/// exponents call `f64::powi`. Sixteen keeps the expansion at no more than six
/// multiplications (`x^15`), plus one division for negative exponents.
pub const MAX_INLINE_POWI: u32 = 16;

/// Flags of every load and store: inputs and outputs are elements of Rust slices, so they are
/// aligned and never trap (lengths are checked before the call).
const TRUSTED: MemFlagsData = MemFlagsData::trusted();

/// The signature of the generated code.
type RawFn = unsafe extern "C" fn(state: *const f64, params: *const f64, out: *mut f64);

/// The signature of the planar entry: state and rates travel in registers.
type PlanarRawFn = unsafe extern "C" fn(x: f64, y: f64, params: *const f64) -> Pair;

/// Two `f64` returned by value. Under the SysV x86-64 and AAPCS64 C conventions this comes back
/// in the first two float registers, which is where Cranelift puts two `f64` return values.
#[repr(C)]
#[derive(Clone, Copy)]
struct Pair(f64, f64);

/// Why a [`Tape`] could not be compiled. Every variant means "use the interpreter instead";
/// the invalid-tape variants additionally mean the tape itself is malformed.
#[derive(Debug, thiserror::Error)]
pub enum JitError {
    /// Cranelift cannot generate code for this machine (architecture or CPU features).
    #[error("the JIT does not support this machine: {0}")]
    UnsupportedHost(String),
    /// Cranelift rejected the function or could not link or map it.
    #[error("code generation failed while {stage}: {message}")]
    Codegen {
        /// What the JIT was doing, e.g. "defining the function".
        stage: &'static str,
        /// Cranelift's description of the failure.
        message: String,
    },
    /// Operation `slot` uses `operand`, which is not an earlier slot.
    #[error("operation {slot} uses slot {operand}, which is not computed before it")]
    InvalidOperand {
        /// The slot of the offending operation.
        slot: Slot,
        /// The operand it refers to (`>= slot`).
        operand: Slot,
    },
    /// Operation `slot` reads input `input`, but the tape only has `n_inputs` inputs.
    #[error("operation {slot} reads input {input}, but the tape has only {n_inputs} inputs")]
    InputOutOfRange {
        /// The slot of the offending `Input` operation.
        slot: Slot,
        /// The input index it reads.
        input: u32,
        /// `n_state + n_params`.
        n_inputs: u64,
    },
    /// Output number `output` names slot `slot`, but the tape only has `n_slots` slots.
    #[error("output {output} names slot {slot}, but the tape has only {n_slots} slots")]
    OutputOutOfRange {
        /// Position of the output in `Tape::outputs`.
        output: usize,
        /// The slot it names.
        slot: Slot,
        /// `ops.len()`.
        n_slots: usize,
    },
    /// The tape has more operations, inputs or outputs than the code generator can address.
    #[error("the tape is too large to compile ({what})")]
    TooLarge {
        /// Which dimension overflowed.
        what: &'static str,
    },
}

/// A [`Tape`] compiled to native code.
///
/// The machine code lives in memory owned by this value and is freed when it is dropped. The
/// function only reads its inputs and writes its outputs, so one `JitFunction` may be called from
/// many threads at once.
pub struct JitFunction {
    /// Entry point of the generated code; valid while `module` is alive.
    code: RawFn,
    /// Register-passing entry for planar tapes, when the host's C convention allows it.
    planar: Option<PlanarRawFn>,
    n_state: usize,
    n_params: usize,
    n_outputs: usize,
    /// Owner of the executable memory behind `code`. Only touched again in `Drop`.
    module: ManuallyDrop<ModuleOwner>,
}

/// Holds the [`JITModule`] so that [`JitFunction`] can be `Sync`.
struct ModuleOwner(JITModule);

// SAFETY: `JITModule` is `Send` but not `Sync` (it caches symbols in a `RefCell`). A
// `ModuleOwner` is never accessed through a shared reference: `JitFunction` only reads it in
// `Drop`, which has `&mut self`. Sharing `&JitFunction` across threads therefore shares only the
// immutable machine code and the plain fields, which is sound.
unsafe impl Sync for ModuleOwner {}

impl Drop for JitFunction {
    fn drop(&mut self) {
        // SAFETY: `drop` runs once, and `module` is not used after being taken here.
        let owner = unsafe { ManuallyDrop::take(&mut self.module) };
        // SAFETY: the only pointers into this module's memory are `self.code` and `self.planar`,
        // which are never called again: we hold `&mut self`, so no call through `eval` is in progress on any thread, and
        // `self` is being destroyed.
        unsafe { owner.0.free_memory() };
    }
}

impl std::fmt::Debug for JitFunction {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("JitFunction")
            .field("n_state", &self.n_state)
            .field("n_params", &self.n_params)
            .field("n_outputs", &self.n_outputs)
            .finish_non_exhaustive()
    }
}

impl JitFunction {
    /// Validates `tape` and compiles it to native code for the host.
    ///
    /// # Errors
    ///
    /// [`JitError::UnsupportedHost`] when Cranelift has no backend for this machine,
    /// [`JitError::Codegen`] when code generation fails, and [`JitError::InvalidOperand`],
    /// [`JitError::InputOutOfRange`], [`JitError::OutputOutOfRange`] or [`JitError::TooLarge`]
    /// when the tape is malformed.
    pub fn compile(tape: &Tape) -> Result<JitFunction, JitError> {
        let layout = validate(tape)?;
        let mut module = new_module()?;
        let func_id = define(&mut module, tape, &layout, Entry::Memory)?;
        let planar_id = if is_planar(tape) && planar_abi_matches(module.isa().default_call_conv()) {
            Some(define(&mut module, tape, &layout, Entry::Planar)?)
        } else {
            None
        };
        module
            .finalize_definitions()
            .map_err(|e| codegen_error("finalizing the code", &e))?;
        let ptr = module.get_finalized_function(func_id);
        // SAFETY: `ptr` is the entry of the function just defined with the signature
        // `(ptr, ptr, ptr) -> ()` in the host's default calling convention, which is the C
        // calling convention that `RawFn` names. The memory stays mapped until `module` (moved
        // into the result below) is dropped.
        let code = unsafe { std::mem::transmute::<*const u8, RawFn>(ptr) };
        let planar = planar_id.map(|id| {
            let ptr = module.get_finalized_function(id);
            // SAFETY: as above, for the signature `(f64, f64, ptr) -> (f64, f64)`, which
            // `planar_abi_matches` confirmed is the C convention's `(f64, f64, ptr) -> Pair`.
            unsafe { std::mem::transmute::<*const u8, PlanarRawFn>(ptr) }
        });
        Ok(JitFunction {
            code,
            planar,
            n_state: layout.n_state,
            n_params: layout.n_params,
            n_outputs: tape.outputs.len(),
            module: ManuallyDrop::new(ModuleOwner(module)),
        })
    }

    /// Evaluates all outputs: `out[k]` receives the value of `tape.outputs[k]`.
    ///
    /// Only the first `n_state`, `n_params` and [`n_outputs`](Self::n_outputs) elements of the
    /// slices are used; `out` beyond that is left untouched.
    ///
    /// # Panics
    ///
    /// If a slice is shorter than the tape's `n_state`, `n_params` or number of outputs. This is
    /// a programming error, checked once per call.
    #[inline]
    pub fn eval(&self, state: &[f64], params: &[f64], out: &mut [f64]) {
        if state.len() < self.n_state || params.len() < self.n_params || out.len() < self.n_outputs
        {
            self.length_mismatch(state.len(), params.len(), out.len());
        }
        // SAFETY: the lengths were checked just above, and the borrows guarantee that `out`
        // does not overlap `state` or `params`.
        unsafe { self.eval_unchecked(state.as_ptr(), params.as_ptr(), out.as_mut_ptr()) }
    }

    /// Evaluates all outputs through raw pointers, without any check.
    ///
    /// For hot loops that have already checked their buffer sizes once; [`eval`](Self::eval)
    /// is the safe wrapper.
    ///
    /// # Safety
    ///
    /// `state` must be valid for reading `n_state` values, `params` for reading `n_params`
    /// values and `out` for writing [`n_outputs`](Self::n_outputs) values, all aligned for
    /// `f64`; `out` must not overlap the other two.
    #[inline]
    pub unsafe fn eval_unchecked(&self, state: *const f64, params: *const f64, out: *mut f64) {
        // SAFETY: validation at compile time guarantees the code accesses only
        // `state[..n_state]`, `params[..n_params]` and `out[..n_outputs]`, which the caller
        // promises are valid; the code is alive because `self` owns the module.
        unsafe { (self.code)(state, params, out) }
    }

    /// Binds `params` for repeated evaluation of a planar model: a tape with exactly two state
    /// variables and two outputs (`dx/dt`, `dy/dt`). `None` for any other tape.
    ///
    /// [`PlanarRates::eval`] takes the state and returns the rates by value, in registers, with
    /// no per-call checks. In an integration loop that is markedly faster than
    /// [`eval`](Self::eval), whose inputs and outputs go through memory.
    ///
    /// # Panics
    ///
    /// If `params` is shorter than the tape's `n_params` (a programming error).
    pub fn planar<'a>(&'a self, params: &'a [f64]) -> Option<PlanarRates<'a>> {
        if self.n_state != 2 || self.n_outputs != 2 {
            return None;
        }
        if params.len() < self.n_params {
            self.length_mismatch(2, params.len(), 2);
        }
        Some(PlanarRates {
            function: self,
            params,
        })
    }

    /// Number of outputs, i.e. the length of the tape's `outputs`.
    pub fn n_outputs(&self) -> usize {
        self.n_outputs
    }

    /// Number of state inputs the function reads (the tape's `n_state`).
    pub fn n_state(&self) -> usize {
        self.n_state
    }

    /// Number of parameter inputs the function reads (the tape's `n_params`).
    pub fn n_params(&self) -> usize {
        self.n_params
    }

    #[cold]
    #[inline(never)]
    #[track_caller]
    fn length_mismatch(&self, state: usize, params: usize, out: usize) -> ! {
        panic!(
            "JitFunction: slices too short: state {state} < {}, params {params} < {}, \
             or out {out} < {}",
            self.n_state, self.n_params, self.n_outputs
        )
    }
}

/// The rates of a planar model with its parameters bound, from [`JitFunction::planar`].
///
/// Cheap to copy; all checks were made when it was created.
#[derive(Clone, Copy, Debug)]
pub struct PlanarRates<'a> {
    function: &'a JitFunction,
    /// At least `function.n_params` long.
    params: &'a [f64],
}

impl PlanarRates<'_> {
    /// The two outputs (`[dx/dt, dy/dt]`) at the state `(x, y)`; bit-identical to
    /// [`JitFunction::eval`].
    #[inline]
    pub fn eval(&self, x: f64, y: f64) -> [f64; 2] {
        match self.function.planar {
            Some(code) => {
                // SAFETY: the tape is planar and `params` holds at least `n_params` values
                // (checked in `JitFunction::planar`); the code reads only `params[..n_params]`
                // and is alive while `self.function` is.
                let Pair(dx, dy) = unsafe { code(x, y, self.params.as_ptr()) };
                [dx, dy]
            }
            None => {
                let (state, mut out) = ([x, y], [0.0; 2]);
                // SAFETY: as above; `state` and `out` have the tape's two states and outputs.
                unsafe {
                    self.function.eval_unchecked(
                        state.as_ptr(),
                        self.params.as_ptr(),
                        out.as_mut_ptr(),
                    );
                }
                out
            }
        }
    }
}

/// Whether `tape` has the shape of a planar model: two state variables and two outputs.
fn is_planar(tape: &Tape) -> bool {
    tape.n_state == 2 && tape.outputs.len() == 2
}

/// Whether Cranelift's two-`f64` return in `call_conv` is the C convention's return of [`Pair`].
fn planar_abi_matches(call_conv: CallConv) -> bool {
    // NOTE: SysV x86-64 classifies a struct of two doubles as SSE, SSE and returns it in xmm0 and
    // xmm1; AAPCS64 (Linux, macOS) returns it as a homogeneous float aggregate in d0 and d1.
    // Windows x64 returns it through a hidden pointer; there, and on any other target, the
    // planar rates fall back to the memory entry.
    (cfg!(target_arch = "x86_64") && call_conv == CallConv::SystemV)
        || (cfg!(target_arch = "aarch64")
            && matches!(call_conv, CallConv::SystemV | CallConv::AppleAarch64))
}

/// Which of the two entry points to generate.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Entry {
    /// `(state: *const f64, params: *const f64, out: *mut f64)`.
    Memory,
    /// `(x: f64, y: f64, params: *const f64) -> (f64, f64)`, for planar tapes only.
    Planar,
}

/// Where the generated code finds the state variables.
#[derive(Clone, Copy)]
enum State {
    /// Pointer to `state[0]`.
    Memory(Value),
    /// `x` and `y` themselves.
    Registers([Value; 2]),
}

/// Sizes of a validated tape, in the units the code generator needs.
struct Layout {
    n_state: usize,
    n_params: usize,
}

/// Checks that code generated for `tape` stays within its buffers (see the module docs).
fn validate(tape: &Tape) -> Result<Layout, JitError> {
    let too_large = |what| JitError::TooLarge { what };
    let n_state = usize::try_from(tape.n_state).map_err(|_| too_large("state inputs"))?;
    let n_params = usize::try_from(tape.n_params).map_err(|_| too_large("parameters"))?;
    // Byte offsets are 32-bit immediates in the generated loads and stores.
    let max_index = (i32::MAX / 8) as usize;
    if n_state > max_index || n_params > max_index {
        return Err(too_large("inputs"));
    }
    if tape.outputs.len() > max_index {
        return Err(too_large("outputs"));
    }
    if Slot::try_from(tape.ops.len()).is_err() {
        return Err(too_large("operations"));
    }
    let n_inputs = u64::from(tape.n_state) + u64::from(tape.n_params);
    for (index, op) in tape.ops.iter().enumerate() {
        // Fits: the length was checked against `Slot` above.
        let slot = index as Slot;
        let check = |operand: Slot| {
            if operand < slot {
                Ok(())
            } else {
                Err(JitError::InvalidOperand { slot, operand })
            }
        };
        if let Op::Input(input) = *op
            && u64::from(input) >= n_inputs
        {
            return Err(JitError::InputOutOfRange {
                slot,
                input,
                n_inputs,
            });
        }
        for operand in op.operands().into_iter().flatten() {
            check(operand)?;
        }
    }
    for (output, &slot) in tape.outputs.iter().enumerate() {
        if slot as usize >= tape.ops.len() {
            return Err(JitError::OutputOutOfRange {
                output,
                slot,
                n_slots: tape.ops.len(),
            });
        }
    }
    Ok(Layout { n_state, n_params })
}

fn codegen_error(stage: &'static str, error: &dyn std::fmt::Display) -> JitError {
    JitError::Codegen {
        stage,
        message: error.to_string(),
    }
}

/// A JIT module for the host, optimising for speed, with the math helpers registered.
fn new_module() -> Result<JITModule, JitError> {
    let mut flags = settings::builder();
    for (name, value) in [
        ("opt_level", "speed"),
        // The JIT links calls with absolute addresses; see `JITBuilder::with_flags`.
        ("use_colocated_libcalls", "false"),
        ("is_pic", "false"),
    ] {
        flags
            .set(name, value)
            .map_err(|e| codegen_error("configuring the code generator", &e))?;
    }
    let isa = cranelift_native::builder()
        .map_err(|msg| JitError::UnsupportedHost(msg.to_owned()))?
        .finish(settings::Flags::new(flags))
        .map_err(|e| JitError::UnsupportedHost(e.to_string()))?;
    let mut builder = JITBuilder::with_isa(isa, default_libcall_names());
    for helper in Helper::ALL {
        builder.symbol(helper.symbol(), helper.address());
    }
    Ok(JITModule::new(builder))
}

/// Declares and defines the evaluation function for a validated `tape`, with the given entry.
fn define(
    module: &mut JITModule,
    tape: &Tape,
    layout: &Layout,
    entry_kind: Entry,
) -> Result<FuncId, JitError> {
    let ptr = module.target_config().pointer_type();
    let mut sig = module.make_signature();
    let name = match entry_kind {
        Entry::Memory => {
            sig.params.extend([AbiParam::new(ptr); 3]);
            "quarry_tape"
        }
        Entry::Planar => {
            sig.params.extend([
                AbiParam::new(types::F64),
                AbiParam::new(types::F64),
                AbiParam::new(ptr),
            ]);
            sig.returns.extend([AbiParam::new(types::F64); 2]);
            "quarry_tape_planar"
        }
    };
    let func_id = module
        .declare_function(name, Linkage::Local, &sig)
        .map_err(|e| codegen_error("declaring the function", &e))?;

    let frontend_config = module.target_config();
    let mut ctx: Context = module.make_context();
    ctx.func.signature = sig;
    ctx.func.name = ir::UserFuncName::user(0, func_id.as_u32());
    let mut fn_ctx = FunctionBuilderContext::new();
    {
        let mut b = FunctionBuilder::new(&mut ctx.func, &mut fn_ctx);
        let entry = b.create_block();
        b.append_block_params_for_function_params(entry);
        b.switch_to_block(entry);
        let &[first, second, third] = b.block_params(entry) else {
            return Err(JitError::Codegen {
                stage: "building the function",
                message: "entry block does not have three parameters".to_owned(),
            });
        };
        let (state, params) = match entry_kind {
            Entry::Memory => (State::Memory(first), second),
            Entry::Planar => (State::Registers([first, second]), third),
        };
        let mut emitter = Emitter {
            module,
            b,
            helpers: [None; Helper::ALL.len()],
            n_state: layout.n_state,
            state,
            params,
        };
        let live = live_slots(tape);
        let mut values: Vec<Option<Value>> = Vec::with_capacity(tape.ops.len());
        for (op, &is_live) in tape.ops.iter().zip(&live) {
            let value = if is_live {
                Some(emitter.op(*op, &values)?)
            } else {
                None
            };
            values.push(value);
        }
        let outputs = tape
            .outputs
            .iter()
            .map(|&slot| computed(&values, slot))
            .collect::<Result<Vec<_>, _>>()?;
        match entry_kind {
            Entry::Memory => {
                for (k, &value) in outputs.iter().enumerate() {
                    // Fits: the number of outputs was checked against `i32::MAX / 8`.
                    let offset = (k * 8) as i32;
                    emitter.b.ins().store(TRUSTED, value, third, offset);
                }
                emitter.b.ins().return_(&[]);
            }
            Entry::Planar => {
                emitter.b.ins().return_(&outputs);
            }
        }
        emitter.b.seal_all_blocks();
        emitter.b.finalize(frontend_config);
    }
    module
        .define_function(func_id, &mut ctx)
        .map_err(|e| codegen_error("defining the function", &e))?;
    module.clear_context(&mut ctx);
    Ok(func_id)
}

/// Marks the slots some output depends on; the others are not compiled.
fn live_slots(tape: &Tape) -> Vec<bool> {
    let mut live = vec![false; tape.ops.len()];
    for &slot in &tape.outputs {
        live[slot as usize] = true;
    }
    for i in (0..tape.ops.len()).rev() {
        if !live[i] {
            continue;
        }
        for operand in tape.ops[i].operands().into_iter().flatten() {
            live[operand as usize] = true;
        }
    }
    live
}

/// Translates tape operations into Cranelift instructions inside one function.
struct Emitter<'m, 'f> {
    module: &'m mut JITModule,
    b: FunctionBuilder<'f>,
    /// Each helper's `FuncRef` in this function, declared on first use.
    helpers: [Option<FuncRef>; Helper::ALL.len()],
    n_state: usize,
    state: State,
    params: Value,
}

/// The value of an earlier, live slot.
fn computed(values: &[Option<Value>], slot: Slot) -> Result<Value, JitError> {
    values
        .get(slot as usize)
        .copied()
        .flatten()
        .ok_or_else(|| JitError::Codegen {
            stage: "building the function",
            message: format!("slot {slot} used before it was computed"),
        })
}

impl Emitter<'_, '_> {
    /// Emits the instructions of one operation and returns its value.
    fn op(&mut self, op: Op, values: &[Option<Value>]) -> Result<Value, JitError> {
        let v = |slot| computed(values, slot);
        Ok(match op {
            Op::Const(c) => self.b.ins().f64const(c),
            Op::Input(i) => {
                let i = i as usize;
                let (base, index) = match self.state {
                    State::Registers(xy) if i < self.n_state => {
                        return xy.get(i).copied().ok_or_else(|| JitError::Codegen {
                            stage: "building the function",
                            message: format!("state input {i} of a planar tape"),
                        });
                    }
                    State::Memory(state) if i < self.n_state => (state, i),
                    _ => (self.params, i - self.n_state),
                };
                // Fits: `index < n_state` or `< n_params`, both checked against `i32::MAX / 8`.
                let offset = (index * 8) as i32;
                self.b.ins().load(types::F64, TRUSTED, base, offset)
            }
            Op::Add(a, c) => {
                let (a, c) = (v(a)?, v(c)?);
                self.b.ins().fadd(a, c)
            }
            Op::Sub(a, c) => {
                let (a, c) = (v(a)?, v(c)?);
                self.b.ins().fsub(a, c)
            }
            Op::Mul(a, c) => {
                let (a, c) = (v(a)?, v(c)?);
                self.b.ins().fmul(a, c)
            }
            Op::Div(a, c) => {
                let (a, c) = (v(a)?, v(c)?);
                self.b.ins().fdiv(a, c)
            }
            Op::Neg(a) => {
                let a = v(a)?;
                self.b.ins().fneg(a)
            }
            Op::Pow(a, c) => {
                let (a, c) = (v(a)?, v(c)?);
                self.call(Helper::Pow, &[a, c])?
            }
            Op::Powi(a, n) => {
                let a = v(a)?;
                if n.unsigned_abs() <= MAX_INLINE_POWI {
                    self.powi_inline(a, n)
                } else {
                    let n = self.b.ins().iconst(types::I32, i64::from(n));
                    self.call(Helper::Powi, &[a, n])?
                }
            }
            Op::Call(func, a) => {
                let a = v(a)?;
                match func {
                    Func::Sqrt => self.b.ins().sqrt(a),
                    Func::Abs => self.b.ins().fabs(a),
                    Func::Sign => self.sign(a),
                    Func::Exp => self.call(Helper::Exp, &[a])?,
                    Func::Ln => self.call(Helper::Ln, &[a])?,
                    Func::Log10 => self.call(Helper::Log10, &[a])?,
                    Func::Sin => self.call(Helper::Sin, &[a])?,
                    Func::Cos => self.call(Helper::Cos, &[a])?,
                    Func::Tan => self.call(Helper::Tan, &[a])?,
                }
            }
            Op::Min(a, c) => {
                let (a, c) = (v(a)?, v(c)?);
                self.min_max(FloatCC::LessThan, a, c)
            }
            Op::Max(a, c) => {
                let (a, c) = (v(a)?, v(c)?);
                self.min_max(FloatCC::GreaterThan, a, c)
            }
        })
    }

    /// `f64::min` (with `LessThan`) or `f64::max` (with `GreaterThan`) of `a` and `b`.
    fn min_max(&mut self, better: FloatCC, a: Value, b: Value) -> Value {
        // NOTE: `fmin`/`fmax` in Cranelift propagate NaN, but `f64::min`/`max` return the other
        // operand when one is NaN. Take `b` when it is strictly better than `a` or when `a` is
        // NaN; otherwise `a`. So a NaN `b` loses every comparison and yields `a`; ties (including
        // −0 against +0) yield `a`.
        let b_better = self.b.ins().fcmp(better, b, a);
        let picked = self.b.ins().select(b_better, b, a);
        let a_nan = self.b.ins().fcmp(FloatCC::Unordered, a, a);
        self.b.ins().select(a_nan, b, picked)
    }

    /// −1, +0 or 1 by the sign of `x`; NaN stays NaN.
    fn sign(&mut self, x: Value) -> Value {
        let zero = self.b.ins().f64const(0.0);
        let one = self.b.ins().f64const(1.0);
        let minus_one = self.b.ins().f64const(-1.0);
        let positive = self.b.ins().fcmp(FloatCC::GreaterThan, x, zero);
        let negative = self.b.ins().fcmp(FloatCC::LessThan, x, zero);
        // NOTE: the cases left after both comparisons are ±0 and NaN. For them `x − x` is +0
        // (round to nearest gives +0 for −0 − −0) or NaN, which saves a third comparison.
        let zero_or_nan = self.b.ins().fsub(x, x);
        let non_positive = self.b.ins().select(negative, minus_one, zero_or_nan);
        self.b.ins().select(positive, one, non_positive)
    }

    /// `x^n` by repeated squaring, in the order of the runtime `f64::powi`.
    fn powi_inline(&mut self, x: Value, n: i32) -> Value {
        let mut m = n.unsigned_abs();
        if m == 0 {
            // `f64::powi(x, 0)` is 1 for every `x`, NaN included.
            return self.b.ins().f64const(1.0);
        }
        // NOTE: `f64::powi` (compiler-rt's `__powidf2`) keeps `r = 1` and, for each bit of `|n|`
        // from the lowest, multiplies `r` by the current square when the bit is set, then squares.
        // Skipping its exact `1 · x` and stopping after the top bit gives the same products.
        let mut base = x;
        while m & 1 == 0 {
            base = self.b.ins().fmul(base, base);
            m >>= 1;
        }
        let mut acc = base;
        m >>= 1;
        while m != 0 {
            base = self.b.ins().fmul(base, base);
            if m & 1 == 1 {
                acc = self.b.ins().fmul(acc, base);
            }
            m >>= 1;
        }
        if n < 0 {
            let one = self.b.ins().f64const(1.0);
            acc = self.b.ins().fdiv(one, acc);
        }
        acc
    }

    /// Calls a math helper and returns its result.
    fn call(&mut self, helper: Helper, args: &[Value]) -> Result<Value, JitError> {
        let func_ref = match self.helpers[helper as usize] {
            Some(func_ref) => func_ref,
            None => {
                let func_ref = self.declare_helper(helper)?;
                self.helpers[helper as usize] = Some(func_ref);
                func_ref
            }
        };
        let call = self.b.ins().call(func_ref, args);
        match self.b.inst_results(call) {
            &[result] => Ok(result),
            _ => Err(JitError::Codegen {
                stage: "building the function",
                message: format!("{} does not return one value", helper.symbol()),
            }),
        }
    }

    /// Imports `helper` into the module and the function being built.
    fn declare_helper(&mut self, helper: Helper) -> Result<FuncRef, JitError> {
        let mut sig: Signature = self.module.make_signature();
        sig.params.push(AbiParam::new(types::F64));
        match helper {
            Helper::Pow => sig.params.push(AbiParam::new(types::F64)),
            Helper::Powi => sig.params.push(AbiParam::new(types::I32)),
            _ => {}
        }
        sig.returns.push(AbiParam::new(types::F64));
        let id = self
            .module
            .declare_function(helper.symbol(), Linkage::Import, &sig)
            .map_err(|e| codegen_error("importing a math function", &e))?;
        Ok(self.module.declare_func_in_func(id, self.b.func))
    }
}

/// The Rust functions generated code calls.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Helper {
    Pow,
    Powi,
    Exp,
    Ln,
    Log10,
    Sin,
    Cos,
    Tan,
}

impl Helper {
    const ALL: [Helper; 8] = [
        Helper::Pow,
        Helper::Powi,
        Helper::Exp,
        Helper::Ln,
        Helper::Log10,
        Helper::Sin,
        Helper::Cos,
        Helper::Tan,
    ];

    /// The name the JIT links the helper under.
    fn symbol(self) -> &'static str {
        match self {
            Helper::Pow => "quarry_jit_pow",
            Helper::Powi => "quarry_jit_powi",
            Helper::Exp => "quarry_jit_exp",
            Helper::Ln => "quarry_jit_ln",
            Helper::Log10 => "quarry_jit_log10",
            Helper::Sin => "quarry_jit_sin",
            Helper::Cos => "quarry_jit_cos",
            Helper::Tan => "quarry_jit_tan",
        }
    }

    fn address(self) -> *const u8 {
        match self {
            Helper::Pow => helpers::pow as *const u8,
            Helper::Powi => helpers::powi as *const u8,
            Helper::Exp => helpers::exp as *const u8,
            Helper::Ln => helpers::ln as *const u8,
            Helper::Log10 => helpers::log10 as *const u8,
            Helper::Sin => helpers::sin as *const u8,
            Helper::Cos => helpers::cos as *const u8,
            Helper::Tan => helpers::tan as *const u8,
        }
    }
}

/// `extern "C"` wrappers around the `f64` methods, so generated code and the interpreter call
/// the very same implementations.
mod helpers {
    pub(super) extern "C" fn pow(x: f64, y: f64) -> f64 {
        x.powf(y)
    }
    pub(super) extern "C" fn powi(x: f64, n: i32) -> f64 {
        x.powi(n)
    }
    pub(super) extern "C" fn exp(x: f64) -> f64 {
        x.exp()
    }
    pub(super) extern "C" fn ln(x: f64) -> f64 {
        x.ln()
    }
    pub(super) extern "C" fn log10(x: f64) -> f64 {
        x.log10()
    }
    pub(super) extern "C" fn sin(x: f64) -> f64 {
        x.sin()
    }
    pub(super) extern "C" fn cos(x: f64) -> f64 {
        x.cos()
    }
    pub(super) extern "C" fn tan(x: f64) -> f64 {
        x.tan()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// SplitMix64 (Steele, Lea & Flood, "Fast splittable pseudorandom number generators",
    /// OOPSLA 2014): enough randomness for test inputs without a dependency.
    struct Rng(u64);

    impl Rng {
        fn next_u64(&mut self) -> u64 {
            self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
            let mut z = self.0;
            z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
            z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
            z ^ (z >> 31)
        }

        fn below(&mut self, n: usize) -> usize {
            (self.next_u64() % n as u64) as usize
        }

        /// Uniform in `[-1, 1)`.
        fn unit(&mut self) -> f64 {
            (self.next_u64() >> 11) as f64 / (1u64 << 52) as f64 - 1.0
        }

        /// A value that is special (NaN, ±inf, ±0, tiny, huge) one time in four, otherwise of
        /// moderate size with a random sign and magnitude.
        fn input(&mut self) -> f64 {
            if self.below(4) == 0 {
                SPECIAL[self.below(SPECIAL.len())]
            } else {
                self.unit() * 10f64.powi(self.below(7) as i32 - 3)
            }
        }
    }

    const SPECIAL: [f64; 14] = [
        f64::NAN,
        f64::INFINITY,
        f64::NEG_INFINITY,
        0.0,
        -0.0,
        1.0,
        -1.0,
        0.5,
        -2.0,
        f64::MIN_POSITIVE,
        -5e-324,
        f64::MAX,
        f64::MIN,
        std::f64::consts::PI,
    ];

    /// The reference semantics, written directly with Rust's `f64` operations.
    fn reference(tape: &Tape, state: &[f64], params: &[f64]) -> Vec<f64> {
        let mut v: Vec<f64> = Vec::with_capacity(tape.ops.len());
        for op in &tape.ops {
            let x = |s: Slot| v[s as usize];
            let value = match *op {
                Op::Const(c) => c,
                Op::Input(i) => {
                    let i = i as usize;
                    if i < state.len() {
                        state[i]
                    } else {
                        params[i - state.len()]
                    }
                }
                Op::Add(a, b) => x(a) + x(b),
                Op::Sub(a, b) => x(a) - x(b),
                Op::Mul(a, b) => x(a) * x(b),
                Op::Div(a, b) => x(a) / x(b),
                Op::Neg(a) => -x(a),
                Op::Pow(a, b) => x(a).powf(x(b)),
                Op::Powi(a, n) => x(a).powi(n),
                Op::Call(f, a) => {
                    let a = x(a);
                    match f {
                        Func::Exp => a.exp(),
                        Func::Ln => a.ln(),
                        Func::Log10 => a.log10(),
                        Func::Sqrt => a.sqrt(),
                        Func::Abs => a.abs(),
                        Func::Sin => a.sin(),
                        Func::Cos => a.cos(),
                        Func::Tan => a.tan(),
                        Func::Sign => {
                            if a > 0.0 {
                                1.0
                            } else if a < 0.0 {
                                -1.0
                            } else if a.is_nan() {
                                a
                            } else {
                                0.0
                            }
                        }
                    }
                }
                // `f64` leaves the zero returned for `min(±0, ∓0)` open; the JIT documents that
                // it returns the first operand, so ties are pinned to that.
                Op::Min(a, b) if x(a) == x(b) => x(a),
                Op::Max(a, b) if x(a) == x(b) => x(a),
                Op::Min(a, b) => x(a).min(x(b)),
                Op::Max(a, b) => x(a).max(x(b)),
            };
            v.push(value);
        }
        tape.outputs.iter().map(|&s| v[s as usize]).collect()
    }

    /// Distance in units in the last place; `0` means bit-identical (any two NaNs count as
    /// identical, `+0` and `−0` do not).
    fn ulps(a: f64, b: f64) -> u64 {
        if a.is_nan() && b.is_nan() {
            return 0;
        }
        if a.is_nan() || b.is_nan() {
            return u64::MAX;
        }
        // Map the bit patterns onto a line where adjacent floats are adjacent integers, with
        // −0 one step below +0.
        let ordered = |x: f64| {
            let bits = x.to_bits() as i64;
            if bits < 0 { i64::MIN - bits - 1 } else { bits }
        };
        ordered(a).abs_diff(ordered(b))
    }

    fn compile(tape: &Tape) -> JitFunction {
        match JitFunction::compile(tape) {
            Ok(f) => f,
            Err(e) => panic!("compiling {tape:?}: {e}"),
        }
    }

    fn jit_eval(f: &JitFunction, state: &[f64], params: &[f64]) -> Vec<f64> {
        let mut out = vec![f64::from_bits(0x7ff4_dead_beef_0000); f.n_outputs()];
        f.eval(state, params, &mut out);
        out
    }

    /// Asserts JIT and reference agree on `tape` bit for bit, except outputs whose slot holds
    /// `Powi`, which may be one ulp apart.
    fn assert_agrees(f: &JitFunction, tape: &Tape, state: &[f64], params: &[f64]) {
        let got = jit_eval(f, state, params);
        let want = reference(tape, state, params);
        for (k, (&g, &w)) in got.iter().zip(&want).enumerate() {
            let slot = tape.outputs[k];
            let op = tape.ops[slot as usize];
            let allowed = if matches!(op, Op::Powi(..)) { 1 } else { 0 };
            assert!(
                ulps(g, w) <= allowed,
                "output {k} = {op:?}: jit {g:e} ({:#x}), reference {w:e} ({:#x}), \
                 state {state:?}, params {params:?}",
                g.to_bits(),
                w.to_bits(),
            );
        }
    }

    /// One operation of every kind applied to the inputs `x` (slot 0), `y` (slot 1) and the
    /// parameter `p` (slot 2); every slot is an output.
    fn every_operation_tape() -> Tape {
        use Func::*;
        let mut ops = vec![Op::Input(0), Op::Input(1), Op::Input(2), Op::Const(-1.5)];
        for (a, b) in [(0, 1), (1, 0), (0, 2), (2, 3)] {
            ops.extend([
                Op::Add(a, b),
                Op::Sub(a, b),
                Op::Mul(a, b),
                Op::Div(a, b),
                Op::Pow(a, b),
                Op::Min(a, b),
                Op::Max(a, b),
            ]);
        }
        for a in [0, 1] {
            ops.push(Op::Neg(a));
            for f in [Exp, Ln, Log10, Sqrt, Abs, Sin, Cos, Tan, Sign] {
                ops.push(Op::Call(f, a));
            }
            for n in [
                0,
                1,
                -1,
                2,
                -2,
                3,
                5,
                -7,
                8,
                15,
                -15,
                16,
                -16,
                17,
                -17,
                31,
                100,
                -100,
                i32::MAX,
                i32::MIN,
            ] {
                ops.push(Op::Powi(a, n));
            }
        }
        let outputs = (0..ops.len() as Slot).collect();
        Tape {
            ops,
            outputs,
            n_state: 2,
            n_params: 1,
        }
    }

    #[test]
    fn every_operation_matches_rust_f64_on_special_and_random_inputs() {
        let tape = every_operation_tape();
        let f = compile(&tape);
        for &x in &SPECIAL {
            for &y in &SPECIAL {
                assert_agrees(&f, &tape, &[x, y], &[y * 0.75]);
            }
        }
        let mut rng = Rng(1);
        for _ in 0..5000 {
            let state = [rng.input(), rng.input()];
            assert_agrees(&f, &tape, &state, &[rng.input()]);
        }
    }

    /// A random valid tape over `n_inputs` inputs: every kind of operation, operands drawn
    /// from the most recent slots so that values stay interesting through long chains.
    fn random_tape(rng: &mut Rng, n_state: u32, n_params: u32, len: usize) -> Tape {
        let n_inputs = n_state + n_params;
        let mut ops: Vec<Op> = (0..n_inputs).map(Op::Input).collect();
        while ops.len() < len {
            let n = ops.len();
            let mut pick = || (n - 1 - rng.below(n.min(6))) as Slot;
            let (a, b) = (pick(), pick());
            // Every parseable function plus the internal sign.
            let funcs: Vec<Func> = Func::PARSEABLE.into_iter().chain([Func::Sign]).collect();
            let op = match rng.below(14) {
                0 => Op::Const(rng.input()),
                1 => Op::Input(rng.below(n_inputs as usize) as u32),
                2 => Op::Add(a, b),
                3 => Op::Sub(a, b),
                4 => Op::Mul(a, b),
                5 => Op::Div(a, b),
                6 => Op::Neg(a),
                7 => Op::Pow(a, b),
                8 => Op::Powi(a, rng.below(41) as i32 - 20),
                9 | 10 => Op::Call(funcs[rng.below(funcs.len())], a),
                11 => Op::Min(a, b),
                12 => Op::Max(a, b),
                _ => Op::Mul(a, a),
            };
            ops.push(op);
        }
        // A few outputs, possibly repeated, plus the last slot; some slots stay dead.
        let mut outputs: Vec<Slot> = (0..3).map(|_| rng.below(ops.len()) as Slot).collect();
        outputs.push(ops.len() as Slot - 1);
        Tape {
            ops,
            outputs,
            n_state,
            n_params,
        }
    }

    #[test]
    fn random_tapes_match_rust_f64_bit_for_bit() {
        // NOTE: bit-for-bit is stronger than the documented one-ulp promise for `powi`; it holds
        // because the runtime `f64::powi` multiplies in the same order (see `powi_inline`). If a
        // platform ever breaks this, relax the comparison for tapes containing `Powi`.
        let mut rng = Rng(2);
        for _ in 0..300 {
            let (n_state, n_params) = (1 + rng.below(3) as u32, rng.below(4) as u32);
            let len = 8 + rng.below(40);
            let tape = random_tape(&mut rng, n_state, n_params, len);
            let f = compile(&tape);
            for _ in 0..40 {
                let state: Vec<f64> = (0..n_state).map(|_| rng.input()).collect();
                let params: Vec<f64> = (0..n_params).map(|_| rng.input()).collect();
                let got = jit_eval(&f, &state, &params);
                let want = reference(&tape, &state, &params);
                for (g, w) in got.iter().zip(&want) {
                    assert_eq!(ulps(*g, *w), 0, "{tape:?} at {state:?} {params:?}");
                }
            }
        }
    }

    #[test]
    fn planar_rates_match_eval_bit_for_bit_with_and_without_the_register_entry() {
        let mut rng = Rng(6);
        for round in 0..200 {
            let n_params = rng.below(4) as u32;
            let len = 6 + rng.below(30);
            let mut tape = random_tape(&mut rng, 2, n_params, len);
            tape.outputs.truncate(2);
            let mut f = compile(&tape);
            if round == 0 {
                assert!(
                    f.planar.is_some(),
                    "this host should get the register entry"
                );
            }
            if round % 2 == 1 {
                // Exercise the fallback used where the C convention does not match.
                f.planar = None;
            }
            for _ in 0..40 {
                let (x, y) = (rng.input(), rng.input());
                let params: Vec<f64> = (0..n_params).map(|_| rng.input()).collect();
                let Some(rates) = f.planar(&params) else {
                    panic!("{tape:?} is planar");
                };
                let got = rates.eval(x, y);
                let want = jit_eval(&f, &[x, y], &params);
                assert!(
                    got.iter().zip(&want).all(|(g, w)| ulps(*g, *w) == 0),
                    "{tape:?} at ({x}, {y}) {params:?}: planar {got:?}, eval {want:?}"
                );
            }
        }
    }

    #[test]
    fn only_planar_tapes_bind_as_planar_rates() {
        let f = compile(&every_operation_tape());
        assert!(f.planar(&[1.0]).is_none());
        let one_output = Tape {
            ops: vec![Op::Input(0)],
            outputs: vec![0],
            n_state: 2,
            n_params: 0,
        };
        assert!(compile(&one_output).planar(&[]).is_none());
    }

    #[test]
    #[should_panic(expected = "slices too short")]
    fn planar_panics_on_a_short_parameter_slice() {
        let tape = Tape {
            ops: vec![Op::Input(2), Op::Input(1)],
            outputs: vec![0, 1],
            n_state: 2,
            n_params: 1,
        };
        let _ = compile(&tape).planar(&[]);
    }

    #[test]
    fn inline_powi_is_within_an_ulp_of_f64_powi() {
        let mut rng = Rng(3);
        for n in -(MAX_INLINE_POWI as i32)..=MAX_INLINE_POWI as i32 {
            let tape = Tape {
                ops: vec![Op::Input(0), Op::Powi(0, n)],
                outputs: vec![1],
                n_state: 1,
                n_params: 0,
            };
            let f = compile(&tape);
            let xs = SPECIAL
                .iter()
                .copied()
                .chain((0..2000).map(|_| rng.input() * 3.0));
            for x in xs {
                let got = jit_eval(&f, &[x], &[])[0];
                let want = x.powi(n);
                assert!(
                    ulps(got, want) <= 1,
                    "{x}^{n}: jit {got:e}, f64::powi {want:e}"
                );
            }
        }
    }

    #[test]
    fn min_and_max_return_the_other_operand_when_one_is_nan() {
        let tape = Tape {
            ops: vec![Op::Input(0), Op::Input(1), Op::Min(0, 1), Op::Max(0, 1)],
            outputs: vec![2, 3],
            n_state: 2,
            n_params: 0,
        };
        let f = compile(&tape);
        let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
        let nan = f64::NAN;
        let cases = [
            (nan, 2.0, 2.0, 2.0),
            (2.0, nan, 2.0, 2.0),
            (nan, f64::NEG_INFINITY, f64::NEG_INFINITY, f64::NEG_INFINITY),
            (1.0, 2.0, 1.0, 2.0),
            (2.0, 1.0, 1.0, 2.0),
            (-3.0, f64::INFINITY, -3.0, f64::INFINITY),
        ];
        for (x, y, min, max) in cases {
            let out = jit_eval(&f, &[x, y], &[]);
            assert_eq!(out, [min, max], "min/max of {x}, {y}");
            assert_eq!(out, [x.min(y), x.max(y)]);
        }
        let out = jit_eval(&f, &[nan, nan], &[]);
        assert!(out[0].is_nan() && out[1].is_nan());
        // Ties return the first operand.
        let out = jit_eval(&f, &[-0.0, 0.0], &[]);
        assert_eq!(bits(&out), [(-0.0f64).to_bits(); 2]);
        let out = jit_eval(&f, &[0.0, -0.0], &[]);
        assert_eq!(bits(&out), [0.0f64.to_bits(); 2]);
    }

    #[test]
    fn sign_is_one_minus_one_or_positive_zero_and_keeps_nan() {
        let tape = Tape {
            ops: vec![Op::Input(0), Op::Call(Func::Sign, 0)],
            outputs: vec![1],
            n_state: 1,
            n_params: 0,
        };
        let f = compile(&tape);
        for (x, want) in [
            (3.5, 1.0f64),
            (f64::INFINITY, 1.0),
            (5e-324, 1.0),
            (-2.0, -1.0),
            (f64::NEG_INFINITY, -1.0),
            (0.0, 0.0),
            (-0.0, 0.0),
        ] {
            let got = jit_eval(&f, &[x], &[])[0];
            assert_eq!(got.to_bits(), want.to_bits(), "sign({x})");
        }
        assert!(jit_eval(&f, &[f64::NAN], &[])[0].is_nan());
    }

    #[test]
    fn inputs_past_the_state_read_the_parameters_and_outputs_may_repeat() {
        let tape = Tape {
            ops: vec![
                Op::Input(3),
                Op::Input(0),
                Op::Input(2),
                Op::Const(f64::from_bits(0x7ff8_0000_0000_1234)),
                Op::Sub(0, 2),
            ],
            outputs: vec![4, 0, 4, 1, 3],
            n_state: 2,
            n_params: 2,
        };
        let f = compile(&tape);
        let mut out = [7.0; 6];
        f.eval(&[10.0, 20.0, 99.0], &[30.0, 40.0], &mut out);
        assert_eq!(out[..3], [10.0, 40.0, 10.0]);
        assert_eq!(out[3], 10.0);
        assert_eq!(out[4].to_bits(), 0x7ff8_0000_0000_1234);
        assert_eq!(out[5], 7.0, "out beyond n_outputs is untouched");
    }

    #[test]
    fn a_tape_without_outputs_compiles_and_writes_nothing() {
        let tape = Tape {
            ops: vec![],
            outputs: vec![],
            n_state: 0,
            n_params: 0,
        };
        let f = compile(&tape);
        assert_eq!(f.n_outputs(), 0);
        f.eval(&[], &[], &mut []);
    }

    #[test]
    fn invalid_tapes_are_errors() {
        let tape = |ops: Vec<Op>, outputs: Vec<Slot>| Tape {
            ops,
            outputs,
            n_state: 1,
            n_params: 1,
        };
        let cases = [
            tape(vec![Op::Input(0), Op::Add(0, 1)], vec![1]),
            tape(vec![Op::Neg(0)], vec![0]),
            tape(vec![Op::Input(0), Op::Call(Func::Exp, 7)], vec![1]),
            tape(vec![Op::Input(0), Op::Powi(1, 2)], vec![1]),
        ];
        for t in &cases {
            let err = JitFunction::compile(t).err();
            assert!(
                matches!(err, Some(JitError::InvalidOperand { .. })),
                "{t:?}: {err:?}"
            );
        }
        let err = JitFunction::compile(&tape(vec![Op::Input(2)], vec![0])).err();
        assert!(matches!(
            err,
            Some(JitError::InputOutOfRange {
                slot: 0,
                input: 2,
                n_inputs: 2
            })
        ));
        let err = JitFunction::compile(&tape(vec![Op::Input(u32::MAX)], vec![0])).err();
        assert!(matches!(err, Some(JitError::InputOutOfRange { .. })));
        let err = JitFunction::compile(&tape(vec![Op::Const(1.0)], vec![0, 1])).err();
        assert!(matches!(
            err,
            Some(JitError::OutputOutOfRange {
                output: 1,
                slot: 1,
                n_slots: 1
            })
        ));
        let huge = Tape {
            ops: vec![],
            outputs: vec![],
            n_state: u32::MAX,
            n_params: 0,
        };
        assert!(matches!(
            JitFunction::compile(&huge).err(),
            Some(JitError::TooLarge { .. })
        ));
    }

    #[test]
    #[should_panic(expected = "slices too short")]
    fn eval_panics_on_a_short_state_slice() {
        let f = compile(&every_operation_tape());
        let mut out = vec![0.0; f.n_outputs()];
        f.eval(&[1.0], &[1.0], &mut out);
    }

    #[test]
    #[should_panic(expected = "slices too short")]
    fn eval_panics_on_a_short_output_slice() {
        let f = compile(&every_operation_tape());
        let mut out = vec![0.0; f.n_outputs() - 1];
        f.eval(&[1.0, 2.0], &[1.0], &mut out);
    }

    #[test]
    fn one_function_gives_the_same_results_on_many_threads() {
        fn assert_send_sync<T: Send + Sync>() {}
        assert_send_sync::<JitFunction>();

        let tape = every_operation_tape();
        let f = compile(&tape);
        let inputs: Vec<[f64; 3]> = {
            let mut rng = Rng(4);
            (0..500)
                .map(|_| [rng.input(), rng.input(), rng.input()])
                .collect()
        };
        let expected: Vec<Vec<f64>> = inputs
            .iter()
            .map(|i| jit_eval(&f, &i[..2], &i[2..]))
            .collect();
        std::thread::scope(|scope| {
            for _ in 0..4 {
                scope.spawn(|| {
                    for _ in 0..20 {
                        for (i, want) in inputs.iter().zip(&expected) {
                            let got = jit_eval(&f, &i[..2], &i[2..]);
                            assert!(got.iter().zip(want).all(|(g, w)| ulps(*g, *w) == 0));
                        }
                    }
                });
            }
        });
        // Moving the function to another thread works too.
        let got = std::thread::spawn(move || jit_eval(&f, &inputs[0][..2], &inputs[0][2..]));
        assert!(
            got.join()
                .is_ok_and(|g| g.iter().zip(&expected[0]).all(|(g, w)| ulps(*g, *w) == 0))
        );
    }

    #[test]
    fn compiling_and_dropping_many_functions_frees_their_code() {
        // NOTE: each drop unmaps the function's code (`JITModule::free_memory`); without it the
        // 2000 modules here would leak a few megabytes of executable mappings.
        let mut rng = Rng(5);
        let tape = random_tape(&mut rng, 2, 2, 12);
        for i in 0..2000 {
            let f = compile(&tape);
            if i % 100 == 0 {
                let state = [rng.input(), rng.input()];
                let params = [rng.input(), rng.input()];
                let got = jit_eval(&f, &state, &params);
                let want = reference(&tape, &state, &params);
                assert!(got.iter().zip(&want).all(|(g, w)| ulps(*g, *w) == 0));
            }
        }
    }
}
