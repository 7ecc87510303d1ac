//! The formula tree: what [`super::parse`] produces and what derivatives, simplification,
//! substitution, printing and compilation work on.

use super::func::{pow_const, powi_exponent};
use super::tape::Func;

/// A named mathematical constant of the formula language.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Constant {
    /// π, written `pi`.
    Pi,
    /// Euler's number, written `e`.
    E,
}

impl Constant {
    /// The constant's value.
    pub fn value(self) -> f64 {
        match self {
            Constant::Pi => std::f64::consts::PI,
            Constant::E => std::f64::consts::E,
        }
    }

    /// How the constant is written in formulas.
    pub fn symbol(self) -> &'static str {
        match self {
            Constant::Pi => "pi",
            Constant::E => "e",
        }
    }

    /// The constant written `name`, if any.
    pub fn from_name(name: &str) -> Option<Constant> {
        match name {
            "pi" => Some(Constant::Pi),
            "e" => Some(Constant::E),
            _ => None,
        }
    }
}

/// A two-operand operation. `Min` and `Max` are written as functions, the others infix.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum BinOp {
    /// `a + b`.
    Add,
    /// `a - b`.
    Sub,
    /// `a * b`.
    Mul,
    /// `a / b`.
    Div,
    /// `a ^ b` (right-associative).
    Pow,
    /// `min(a, b)`.
    Min,
    /// `max(a, b)`.
    Max,
}

impl BinOp {
    pub(crate) fn index(self) -> u8 {
        match self {
            BinOp::Add => 0,
            BinOp::Sub => 1,
            BinOp::Mul => 2,
            BinOp::Div => 3,
            BinOp::Pow => 4,
            BinOp::Min => 5,
            BinOp::Max => 6,
        }
    }
}

/// A formula as a tree.
///
/// Equality is structural and ignores the source columns stored in [`Expr::Name`], so
/// `parse("x")` equals `Expr::name("x")`.
#[derive(Clone, Debug)]
pub enum Expr {
    /// A numeric literal (the parser folds a minus sign directly in front of a literal into it).
    Number(f64),
    /// `pi` or `e`.
    Constant(Constant),
    /// A state variable or parameter, resolved only when compiled.
    Name {
        /// The name as written (case-sensitive).
        name: String,
        /// 1-based column (in chars) of this occurrence in the formula; 0 if synthesized.
        column: usize,
    },
    /// Unary minus.
    Neg(Box<Expr>),
    /// An infix operation or `min`/`max`.
    Binary(BinOp, Box<Expr>, Box<Expr>),
    /// A one-argument function; [`Func::Sign`] only appears in derivatives.
    Call(Func, Box<Expr>),
}

impl PartialEq for Expr {
    fn eq(&self, other: &Expr) -> bool {
        match (self, other) {
            (Expr::Number(a), Expr::Number(b)) => a == b,
            (Expr::Constant(a), Expr::Constant(b)) => a == b,
            (Expr::Name { name: a, .. }, Expr::Name { name: b, .. }) => a == b,
            (Expr::Neg(a), Expr::Neg(b)) => a == b,
            (Expr::Binary(o, a, b), Expr::Binary(p, c, d)) => o == p && a == c && b == d,
            (Expr::Call(f, a), Expr::Call(g, b)) => f == g && a == b,
            _ => false,
        }
    }
}

impl Expr {
    /// A numeric literal.
    pub fn number(v: f64) -> Expr {
        Expr::Number(v)
    }

    /// A reference to a variable or parameter (column 0: synthesized). `pi` and `e` give the
    /// constants, as they would when parsed.
    pub fn name(n: &str) -> Expr {
        match Constant::from_name(n) {
            Some(c) => Expr::Constant(c),
            None => Expr::Name {
                name: n.to_owned(),
                column: 0,
            },
        }
    }

    /// `a op b`.
    pub fn binary(op: BinOp, a: Expr, b: Expr) -> Expr {
        Expr::Binary(op, Box::new(a), Box::new(b))
    }

    /// `f(a)`.
    pub fn call(f: Func, a: Expr) -> Expr {
        Expr::Call(f, Box::new(a))
    }

    /// `-a` (not simplified).
    #[allow(clippy::should_implement_trait)]
    pub fn neg(a: Expr) -> Expr {
        Expr::Neg(Box::new(a))
    }

    /// The value if this is a numeric literal.
    pub fn as_number(&self) -> Option<f64> {
        match self {
            Expr::Number(v) => Some(*v),
            _ => None,
        }
    }

    /// The free names (not `pi`/`e`), each once, with the 1-based column of its first
    /// occurrence (0 if it only occurs synthesized), ordered by that column (synthesized last).
    pub fn identifiers(&self) -> Vec<(String, usize)> {
        let mut found: Vec<(String, usize)> = Vec::new();
        self.visit_names(
            &mut |name, column| match found.iter_mut().find(|(n, _)| n == name) {
                Some((_, c)) => {
                    if column != 0 && (*c == 0 || column < *c) {
                        *c = column;
                    }
                }
                None => found.push((name.to_owned(), column)),
            },
        );
        found.sort_by_key(|&(_, c)| (c == 0, c));
        found
    }

    fn visit_names(&self, f: &mut dyn FnMut(&str, usize)) {
        match self {
            Expr::Number(_) | Expr::Constant(_) => {}
            Expr::Name { name, column } => f(name, *column),
            Expr::Neg(a) | Expr::Call(_, a) => a.visit_names(f),
            Expr::Binary(_, a, b) => {
                a.visit_names(f);
                b.visit_names(f);
            }
        }
    }

    /// Whether `name` occurs in the expression.
    pub fn depends_on(&self, name: &str) -> bool {
        match self {
            Expr::Number(_) | Expr::Constant(_) => false,
            Expr::Name { name: n, .. } => n == name,
            Expr::Neg(a) | Expr::Call(_, a) => a.depends_on(name),
            Expr::Binary(_, a, b) => a.depends_on(name) || b.depends_on(name),
        }
    }

    /// Whether the expression contains no names at all (only numbers and constants).
    pub fn is_constant(&self) -> bool {
        match self {
            Expr::Number(_) | Expr::Constant(_) => true,
            Expr::Name { .. } => false,
            Expr::Neg(a) | Expr::Call(_, a) => a.is_constant(),
            Expr::Binary(_, a, b) => a.is_constant() && b.is_constant(),
        }
    }

    /// Replaces every occurrence of `name` by `with` (no simplification is done).
    pub fn substitute(&self, name: &str, with: &Expr) -> Expr {
        match self {
            Expr::Name { name: n, .. } if n == name => with.clone(),
            Expr::Number(_) | Expr::Constant(_) | Expr::Name { .. } => self.clone(),
            Expr::Neg(a) => Expr::neg(a.substitute(name, with)),
            Expr::Call(f, a) => Expr::call(*f, a.substitute(name, with)),
            Expr::Binary(op, a, b) => {
                Expr::binary(*op, a.substitute(name, with), b.substitute(name, with))
            }
        }
    }

    /// Evaluates by walking the tree: the slow reference for the compiled [`super::Tape`].
    /// Names `lookup` does not know evaluate to NaN. A constant integer exponent with
    /// `|n| <= 64` uses `powi`, exactly as the compiled tape does.
    pub fn eval_with(&self, lookup: &dyn Fn(&str) -> Option<f64>) -> f64 {
        match self {
            Expr::Number(v) => *v,
            Expr::Constant(c) => c.value(),
            Expr::Name { name, .. } => lookup(name).unwrap_or(f64::NAN),
            Expr::Neg(a) => -a.eval_with(lookup),
            Expr::Call(f, a) => f.apply(a.eval_with(lookup)),
            Expr::Binary(op, a, b) => {
                let x = a.eval_with(lookup);
                let y = b.eval_with(lookup);
                match op {
                    BinOp::Add => x + y,
                    BinOp::Sub => x - y,
                    BinOp::Mul => x * y,
                    BinOp::Div => x / y,
                    BinOp::Min => x.min(y),
                    BinOp::Max => x.max(y),
                    BinOp::Pow => {
                        if b.is_constant() && powi_exponent(y).is_some() {
                            pow_const(x, y)
                        } else {
                            x.powf(y)
                        }
                    }
                }
            }
        }
    }

    /// Number of nodes in the tree (a measure of expression swell).
    pub fn size(&self) -> usize {
        match self {
            Expr::Number(_) | Expr::Constant(_) | Expr::Name { .. } => 1,
            Expr::Neg(a) | Expr::Call(_, a) => 1 + a.size(),
            Expr::Binary(_, a, b) => 1 + a.size() + b.size(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::parse;

    fn p(s: &str) -> Expr {
        parse(s).unwrap_or_else(|e| panic!("{s}: {e}"))
    }

    #[test]
    fn identifiers_report_each_free_name_once_at_its_first_column() {
        // Reference: columns counted by hand.
        let e = p("a*x - alpha*x*y + pi*e");
        assert_eq!(
            e.identifiers(),
            vec![
                ("a".to_owned(), 1),
                ("x".to_owned(), 3),
                ("alpha".to_owned(), 7),
                ("y".to_owned(), 15)
            ]
        );
    }

    #[test]
    fn columns_count_chars_not_bytes() {
        // Reference: by hand; a no-break space is 2 bytes in UTF-8 but one column.
        let e = p("\u{a0}\u{a0}k");
        assert_eq!(e.identifiers(), vec![("k".to_owned(), 3)]);
    }

    #[test]
    fn synthesized_names_have_column_zero_and_sort_last() {
        let e = p("y + x").substitute("y", &Expr::name("z"));
        assert_eq!(
            e.identifiers(),
            vec![("x".to_owned(), 5), ("z".to_owned(), 0)]
        );
    }

    #[test]
    fn equality_ignores_columns() {
        assert_eq!(p("  x"), Expr::name("x"));
        assert_eq!(Expr::name("pi"), Expr::Constant(Constant::Pi));
        assert_ne!(p("x"), p("X"));
    }

    #[test]
    fn substitute_replaces_every_occurrence_and_nothing_else() {
        // Reference: closed form, (2 - 0.5)*0.5 + 3 at x = 0.5, b = 3.
        let e = p("(2 - x)*x + b").substitute("x", &p("0.5"));
        assert!(!e.depends_on("x"));
        let v = e.eval_with(&|n| (n == "b").then_some(3.0));
        assert_eq!(v, 3.75);
    }

    #[test]
    fn unknown_names_evaluate_to_nan() {
        assert!(p("x + 1").eval_with(&|_| None).is_nan());
    }
}
