//! Compiling formulas into one shared [`Tape`].
//!
//! Nodes are hash-consed (structurally equal subtrees, including commuted operands of `+`,
//! `*`, `min` and `max`, get one slot), operations on constants are folded, constant integer
//! exponents become [`Op::Powi`], and operations no output needs are removed. Only rewrites
//! that are exact in IEEE arithmetic are made (`x*1`, `x/1`, `x-0`, `x^1`, `x^0`, `--x`), so
//! the tape computes bit for bit what [`Expr::eval_with`] computes.

use std::collections::HashMap;

use super::ast::{BinOp, Expr};
use super::func::{pow_const, powi, powi_exponent};
use super::tape::{Func, Op, Slot, Tape};

/// A formula mentions a name that is neither an input nor `pi`/`e`.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
#[error("unknown name '{name}' at column {column}")]
pub struct CompileError {
    /// The unknown name.
    pub name: String,
    /// 1-based column of its first occurrence in the formula (0 if synthesized).
    pub column: usize,
    /// Index of the formula in the slice given to [`compile`].
    pub formula: usize,
}

/// Compiles `exprs` into one tape whose outputs are the formulas in order.
///
/// `inputs` lists the names in input order: the `n_state` state variables first, then the
/// parameters (`Input(i)` reads `state[i]` for `i < n_state`, else `params[i - n_state]`). If a
/// name is listed twice, the first wins.
///
/// # Errors
///
/// A [`CompileError`] for the first name (by formula, then by column) that is not an input.
pub fn compile(exprs: &[&Expr], inputs: &[&str], n_state: usize) -> Result<Tape, CompileError> {
    let mut index: HashMap<&str, u32> = HashMap::new();
    for (i, name) in inputs.iter().enumerate() {
        let i = u32::try_from(i).unwrap_or(u32::MAX);
        index.entry(name).or_insert(i);
    }
    for (formula, e) in exprs.iter().enumerate() {
        if let Some((name, column)) = e
            .identifiers()
            .into_iter()
            .find(|(n, _)| !index.contains_key(n.as_str()))
        {
            return Err(CompileError {
                name,
                column,
                formula,
            });
        }
    }
    let mut builder = Builder {
        ops: Vec::new(),
        seen: HashMap::new(),
        index: &index,
    };
    let outputs: Vec<Slot> = exprs.iter().map(|e| builder.emit(e)).collect();
    let n_state_u32 = u32::try_from(n_state).unwrap_or(u32::MAX);
    let n_params = u32::try_from(inputs.len().saturating_sub(n_state)).unwrap_or(u32::MAX);
    Ok(without_dead_code(
        builder.ops,
        outputs,
        n_state_u32,
        n_params,
    ))
}

#[derive(Clone, Copy, PartialEq, Eq, Hash)]
enum Key {
    Const(u64),
    Input(u32),
    Binary(u8, Slot, Slot),
    Neg(Slot),
    Powi(Slot, i32),
    Call(Func, Slot),
}

fn key(op: &Op) -> Key {
    // Commutative operations are keyed with ordered operands so `x*y` and `y*x` share a slot.
    let sorted = |a: Slot, b: Slot| (a.min(b), a.max(b));
    match *op {
        Op::Const(v) => Key::Const(v.to_bits()),
        Op::Input(i) => Key::Input(i),
        Op::Add(a, b) => {
            let (a, b) = sorted(a, b);
            Key::Binary(0, a, b)
        }
        Op::Sub(a, b) => Key::Binary(1, a, b),
        Op::Mul(a, b) => {
            let (a, b) = sorted(a, b);
            Key::Binary(2, a, b)
        }
        Op::Div(a, b) => Key::Binary(3, a, b),
        Op::Pow(a, b) => Key::Binary(4, a, b),
        Op::Min(a, b) => {
            let (a, b) = sorted(a, b);
            Key::Binary(5, a, b)
        }
        Op::Max(a, b) => {
            let (a, b) = sorted(a, b);
            Key::Binary(6, a, b)
        }
        Op::Neg(a) => Key::Neg(a),
        Op::Powi(a, n) => Key::Powi(a, n),
        Op::Call(f, a) => Key::Call(f, a),
    }
}

struct Builder<'a> {
    ops: Vec<Op>,
    seen: HashMap<Key, Slot>,
    index: &'a HashMap<&'a str, u32>,
}

impl Builder<'_> {
    fn constant(&self, s: Slot) -> Option<f64> {
        match self.ops.get(s as usize) {
            Some(Op::Const(v)) => Some(*v),
            _ => None,
        }
    }

    fn push(&mut self, op: Op) -> Slot {
        let op = self.fold(op);
        if let Op::Input(_) | Op::Const(_) = op {
        } else if let Some(slot) = self.forward(&op) {
            return slot;
        }
        let k = key(&op);
        if let Some(&slot) = self.seen.get(&k) {
            return slot;
        }
        let slot = Slot::try_from(self.ops.len()).unwrap_or(Slot::MAX);
        self.ops.push(op);
        self.seen.insert(k, slot);
        slot
    }

    /// Exact identities whose result is an existing slot.
    fn forward(&self, op: &Op) -> Option<Slot> {
        let c = |s: Slot| self.constant(s);
        match *op {
            Op::Mul(a, b) if c(b) == Some(1.0) => Some(a),
            Op::Mul(a, b) if c(a) == Some(1.0) => Some(b),
            Op::Div(a, b) if c(b) == Some(1.0) => Some(a),
            // x - (+0) = x and x + (-0) = x hold for every x, including -0 and NaN.
            Op::Sub(a, b) if c(b).is_some_and(|v| v == 0.0 && v.is_sign_positive()) => Some(a),
            Op::Add(a, b) if c(b).is_some_and(|v| v == 0.0 && v.is_sign_negative()) => Some(a),
            Op::Add(a, b) if c(a).is_some_and(|v| v == 0.0 && v.is_sign_negative()) => Some(b),
            Op::Powi(a, 1) => Some(a),
            Op::Neg(a) => match self.ops.get(a as usize) {
                Some(Op::Neg(inner)) => Some(*inner),
                _ => None,
            },
            _ => None,
        }
    }

    /// Folds an operation on constants, and turns constant integer powers into `Powi`.
    fn fold(&self, op: Op) -> Op {
        let c = |s: Slot| self.constant(s);
        let both = |a: Slot, b: Slot| c(a).zip(c(b));
        match op {
            Op::Add(a, b) => both(a, b).map_or(op, |(x, y)| Op::Const(x + y)),
            Op::Sub(a, b) => both(a, b).map_or(op, |(x, y)| Op::Const(x - y)),
            Op::Mul(a, b) => both(a, b).map_or(op, |(x, y)| Op::Const(x * y)),
            Op::Div(a, b) => both(a, b).map_or(op, |(x, y)| Op::Const(x / y)),
            Op::Min(a, b) => both(a, b).map_or(op, |(x, y)| Op::Const(x.min(y))),
            Op::Max(a, b) => both(a, b).map_or(op, |(x, y)| Op::Const(x.max(y))),
            Op::Neg(a) => c(a).map_or(op, |x| Op::Const(-x)),
            Op::Call(f, a) => c(a).map_or(op, |x| Op::Const(f.apply(x))),
            Op::Powi(a, n) => match (c(a), n) {
                (Some(x), _) => Op::Const(powi(x, n)),
                (None, 0) => Op::Const(1.0),
                _ => op,
            },
            Op::Pow(a, b) => match (c(a), c(b)) {
                (Some(x), Some(y)) => Op::Const(pow_const(x, y)),
                (None, Some(y)) => match powi_exponent(y) {
                    Some(0) => Op::Const(1.0),
                    Some(n) => Op::Powi(a, n),
                    None => op,
                },
                _ => op,
            },
            Op::Const(_) | Op::Input(_) => op,
        }
    }

    fn emit(&mut self, e: &Expr) -> Slot {
        match e {
            Expr::Number(v) => self.push(Op::Const(*v)),
            Expr::Constant(c) => self.push(Op::Const(c.value())),
            Expr::Name { name, .. } => {
                // `compile` checked every name beforehand; an unknown one would read NaN.
                let i = self.index.get(name.as_str()).copied().unwrap_or(u32::MAX);
                self.push(Op::Input(i))
            }
            Expr::Neg(a) => {
                let a = self.emit(a);
                self.push(Op::Neg(a))
            }
            Expr::Call(f, a) => {
                let a = self.emit(a);
                self.push(Op::Call(*f, a))
            }
            Expr::Binary(op, a, b) => {
                let (a, b) = (self.emit(a), self.emit(b));
                self.push(match op {
                    BinOp::Add => Op::Add(a, b),
                    BinOp::Sub => Op::Sub(a, b),
                    BinOp::Mul => Op::Mul(a, b),
                    BinOp::Div => Op::Div(a, b),
                    BinOp::Pow => Op::Pow(a, b),
                    BinOp::Min => Op::Min(a, b),
                    BinOp::Max => Op::Max(a, b),
                })
            }
        }
    }
}

/// Keeps only the operations some output depends on, renumbering slots.
fn without_dead_code(ops: Vec<Op>, outputs: Vec<Slot>, n_state: u32, n_params: u32) -> Tape {
    let mut live = vec![false; ops.len()];
    for &s in &outputs {
        if let Some(l) = live.get_mut(s as usize) {
            *l = true;
        }
    }
    for i in (0..ops.len()).rev() {
        if live[i] {
            for s in ops[i].operands().into_iter().flatten() {
                if let Some(l) = live.get_mut(s as usize) {
                    *l = true;
                }
            }
        }
    }
    let mut new_slot = vec![Slot::MAX; ops.len()];
    let mut kept = Vec::with_capacity(ops.len());
    let map = |new_slot: &[Slot], s: Slot| new_slot.get(s as usize).copied().unwrap_or(Slot::MAX);
    for (i, op) in ops.into_iter().enumerate() {
        if !live[i] {
            continue;
        }
        new_slot[i] = Slot::try_from(kept.len()).unwrap_or(Slot::MAX);
        let m = |s| map(&new_slot, s);
        kept.push(match op {
            Op::Const(_) | Op::Input(_) => op,
            Op::Add(a, b) => Op::Add(m(a), m(b)),
            Op::Sub(a, b) => Op::Sub(m(a), m(b)),
            Op::Mul(a, b) => Op::Mul(m(a), m(b)),
            Op::Div(a, b) => Op::Div(m(a), m(b)),
            Op::Pow(a, b) => Op::Pow(m(a), m(b)),
            Op::Min(a, b) => Op::Min(m(a), m(b)),
            Op::Max(a, b) => Op::Max(m(a), m(b)),
            Op::Neg(a) => Op::Neg(m(a)),
            Op::Powi(a, n) => Op::Powi(m(a), n),
            Op::Call(f, a) => Op::Call(f, m(a)),
        });
    }
    let outputs = outputs.iter().map(|&s| map(&new_slot, s)).collect();
    Tape {
        ops: kept,
        outputs,
        n_state,
        n_params,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::parse;

    fn p(s: &str) -> Expr {
        parse(s).unwrap_or_else(|e| panic!("{s}: {e}"))
    }

    fn count(tape: &Tape, pred: impl Fn(&Op) -> bool) -> usize {
        tape.ops.iter().filter(|op| pred(op)).count()
    }

    #[test]
    fn unknown_names_are_reported_with_formula_and_first_column() {
        let f = p("a*x - alpha*x*y");
        let g = p("-c*y + z*x*y + z");
        let err = compile(&[&f, &g], &["x", "y", "a", "alpha", "c"], 2).err();
        let expected = CompileError {
            name: "z".to_owned(),
            column: 8,
            formula: 1,
        };
        assert_eq!(err, Some(expected.clone()));
        assert_eq!(expected.to_string(), "unknown name 'z' at column 8");
    }

    #[test]
    fn common_subexpressions_are_shared_across_formulas() {
        let f = p("a*x - alpha*x*y");
        let g = p("-c*y + gamma*(y*x)");
        let tape = compile(&[&f, &g], &["x", "y", "a", "alpha", "c", "gamma"], 2)
            .unwrap_or_else(|e| panic!("{e}"));
        // Each input is read once although x and y occur in both formulas.
        assert_eq!(count(&tape, |op| matches!(op, Op::Input(_))), 6);
        let h = p("x*y + sin(x*y) + cos(y*x)");
        let tape = compile(&[&h, &h], &["x", "y"], 2).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(count(&tape, |op| matches!(op, Op::Mul(..))), 1);
        assert_eq!(tape.outputs[0], tape.outputs[1]);
        assert_eq!(tape.len(), 7);
    }

    #[test]
    fn constants_are_folded_and_small_integer_powers_become_powi() {
        let f = p("2*pi*x^2 + x^(1+2) + x^0.5 + x^-2 + 3^2 + ln(e)");
        let tape = compile(&[&f], &["x"], 1).unwrap_or_else(|e| panic!("{e}"));
        let powis: Vec<i32> = tape
            .ops
            .iter()
            .filter_map(|op| match op {
                Op::Powi(_, n) => Some(*n),
                _ => None,
            })
            .collect();
        assert_eq!(powis, [2, 3, -2]);
        assert_eq!(count(&tape, |op| matches!(op, Op::Pow(..))), 1);
        // 2*pi is one constant and 3^2 + ln(e) never appear as operations.
        assert_eq!(count(&tape, |op| matches!(op, Op::Mul(..))), 1);
        assert_eq!(count(&tape, |op| matches!(op, Op::Call(..))), 0);
    }

    #[test]
    fn the_tape_has_no_dead_code() {
        let f = p("x*1 + 0*0 + (2 + 3)*y");
        let tape = compile(&[&f], &["x", "y"], 2).unwrap_or_else(|e| panic!("{e}"));
        let mut used = vec![false; tape.len()];
        for &o in &tape.outputs {
            used[o as usize] = true;
        }
        for op in &tape.ops {
            for s in op.operands().into_iter().flatten() {
                used[s as usize] = true;
            }
        }
        assert!(used.iter().all(|&u| u), "{:?}", tape.ops);
        // Operands always precede their use.
        for (i, op) in tape.ops.iter().enumerate() {
            assert!(
                op.operands()
                    .into_iter()
                    .flatten()
                    .all(|s| (s as usize) < i)
            );
        }
    }

    #[test]
    fn the_tallest_parseable_formula_survives_every_recursive_pass() {
        // 250 terms make a tree close to MAX_HEIGHT; test threads have small (2 MiB) stacks.
        let src: Vec<String> = (1..=250).map(|k| format!("{k}*x^2*y")).collect();
        let e = p(&src.join(" - "));
        let d = e.derivative("x").derivative("y");
        // Reference: closed form, d²/dxdy of (1 - 2 - ... - 250)*x^2*y = 2*(1 - 31374)*x.
        let v = d.eval_with(&|n| (n == "x").then_some(0.5));
        assert!((v - 2.0 * (1.0 - 31_374.0) * 0.5).abs() < 1e-6, "{v}");
        let tape = compile(&[&e, &d], &["x", "y"], 2).unwrap_or_else(|e| panic!("{e}"));
        let mut out = [0.0; 2];
        tape.eval(&[0.5, 2.0], &[], &mut out);
        assert!((out[1] - v).abs() < 1e-6);
        assert!(parse(&e.to_string()).is_ok());
        assert_eq!(e.simplify().to_string(), "-31373*x^2*y");
    }

    #[test]
    fn an_output_may_be_a_constant_or_an_input() {
        let (f, g) = (p("3"), p("y"));
        let tape = compile(&[&f, &g], &["x", "y"], 2).unwrap_or_else(|e| panic!("{e}"));
        let mut out = [0.0; 2];
        tape.eval(&[1.0, 2.0], &[], &mut out);
        assert_eq!(out, [3.0, 2.0]);
    }
}
