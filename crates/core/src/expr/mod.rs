//! The formula language: parsing, symbolic derivatives and compilation to a [`tape::Tape`].
//!
//! A rate such as `a*x - alpha*x*y` is [`parse`]d into an [`Expr`] tree; the tree can be
//! differentiated ([`Expr::derivative`]), simplified, printed back, turned into a
//! [`Polynomial`] for exact symmetry checks, and [`compile`]d together with the other rates
//! into one [`Tape`] that the interpreter (or the JIT) runs per point or per batch of points.

mod ast;
mod batch;
mod compile;
mod diff;
mod display;
mod func;
#[cfg(feature = "jit")]
pub mod jit;
mod parse;
mod poly;
mod simplify;
pub mod tape;
mod vm;

pub use ast::{BinOp, Constant, Expr};
pub use compile::{CompileError, compile};
pub use parse::{MAX_HEIGHT, MAX_NESTING, ParseError, parse};
pub use poly::{MAX_EXPANDED_POWER, Polynomial};
pub use tape::{Func, Op, Slot, Tape};
