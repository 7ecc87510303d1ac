//! Algebraic simplification, mainly to keep repeated derivatives small.
//!
//! Each node is simplified bottom-up into a normal form: a sum is a constant plus a sorted
//! list of distinct terms, each a numeric coefficient times a product; a product is a sorted
//! list of distinct bases with numeric exponents (`x*x/y` is `x^2*y^-1`). Collecting like terms
//! and like bases gives constant folding, the 0/1 identities, `x - x → 0`, `x/x → 1` and
//! `2*x + 3*x → 5*x` at once. Products are never expanded over sums (that can swell), except
//! that a numeric factor is distributed (`2*(x + 1)` → `2*x + 2`).
//!
//! NOTE: like any computer-algebra system this treats `x/x` as 1 and `0*x` as 0, which
//! differs from IEEE arithmetic only where `x` is 0, infinite or NaN; folding never produces
//! a non-finite number (such an operation is left in place).

use std::cmp::Ordering;

use super::ast::{BinOp, Constant, Expr};
use super::func::pow_const;
use super::tape::Func;

impl Expr {
    /// An equivalent, usually smaller expression (see the module documentation for the rules).
    pub fn simplify(&self) -> Expr {
        simplify(self)
    }
}

pub(crate) fn simplify(e: &Expr) -> Expr {
    match e {
        Expr::Number(_) | Expr::Constant(_) | Expr::Name { .. } => e.clone(),
        Expr::Neg(a) => {
            let mut s = Sum::default();
            s.add(&simplify(a), -1.0);
            s.build()
        }
        Expr::Call(f, a) => call(*f, simplify(a)),
        Expr::Binary(op, a, b) => {
            let (a, b) = (simplify(a), simplify(b));
            match op {
                BinOp::Add | BinOp::Sub => {
                    let mut s = Sum::default();
                    s.add(&a, 1.0);
                    s.add(&b, if *op == BinOp::Add { 1.0 } else { -1.0 });
                    s.build()
                }
                BinOp::Mul | BinOp::Div => {
                    let mut p = Product::default();
                    p.collect(&a, 1.0);
                    p.collect(&b, if *op == BinOp::Mul { 1.0 } else { -1.0 });
                    p.build()
                }
                BinOp::Pow => power(a, b),
                BinOp::Min | BinOp::Max => min_max(*op, a, b),
            }
        }
    }
}

fn finite(v: f64) -> Option<Expr> {
    v.is_finite().then_some(Expr::Number(v))
}

fn call(f: Func, a: Expr) -> Expr {
    if let Some(folded) = a.as_number().and_then(|v| finite(f.apply(v))) {
        return folded;
    }
    match (f, a) {
        (Func::Abs, Expr::Neg(inner)) => Expr::Call(Func::Abs, inner),
        (Func::Abs, inner @ Expr::Call(Func::Abs, _)) => inner,
        (Func::Sign, inner @ Expr::Call(Func::Sign, _)) => inner,
        (Func::Ln, Expr::Call(Func::Exp, inner)) => *inner,
        (Func::Ln, Expr::Constant(Constant::E)) => Expr::Number(1.0),
        (f, a) => Expr::call(f, a),
    }
}

fn min_max(op: BinOp, a: Expr, b: Expr) -> Expr {
    if let (Some(x), Some(y)) = (a.as_number(), b.as_number()) {
        return Expr::Number(if op == BinOp::Min { x.min(y) } else { x.max(y) });
    }
    if a == b {
        return a;
    }
    Expr::binary(op, a, b)
}

fn power(a: Expr, b: Expr) -> Expr {
    let Some(n) = b.as_number() else {
        if a.as_number() == Some(1.0) {
            return a;
        }
        return Expr::binary(BinOp::Pow, a, b);
    };
    if n == 0.0 {
        return Expr::Number(1.0);
    }
    if n == 1.0 {
        return a;
    }
    if let Some(x) = a.as_number() {
        return finite(pow_const(x, n)).unwrap_or_else(|| Expr::binary(BinOp::Pow, a, b));
    }
    if n.fract() == 0.0 {
        // An integer power distributes over a product: (2*x*y^2)^2 = 4*x^2*y^4.
        let mut p = Product::default();
        p.collect(&a, n);
        return p.build();
    }
    Expr::binary(BinOp::Pow, a, b)
}

/// `coefficient * Π base^exponent`, bases distinct.
#[derive(Debug)]
struct Product {
    coefficient: f64,
    factors: Vec<(Expr, f64)>,
}

impl Default for Product {
    fn default() -> Self {
        Product {
            coefficient: 1.0,
            factors: Vec::new(),
        }
    }
}

impl Product {
    /// Multiplies by `e^k` for an integer `k`.
    fn collect(&mut self, e: &Expr, k: f64) {
        match e {
            Expr::Number(v) => {
                let folded = pow_const(*v, k);
                if folded.is_finite() && (*v != 0.0 || k > 0.0) {
                    self.coefficient *= folded;
                } else {
                    self.push(e.clone(), k);
                }
            }
            Expr::Binary(BinOp::Mul, a, b) => {
                self.collect(a, k);
                self.collect(b, k);
            }
            Expr::Binary(BinOp::Div, a, b) => {
                self.collect(a, k);
                self.collect(b, -k);
            }
            Expr::Neg(a) => {
                if k % 2.0 != 0.0 {
                    self.coefficient = -self.coefficient;
                }
                self.collect(a, k);
            }
            // (u^n)^k = u^(n*k) for integer k, whatever n is.
            Expr::Binary(BinOp::Pow, base, exponent) if exponent.as_number().is_some() => {
                let n = exponent.as_number().unwrap_or(1.0);
                self.push((**base).clone(), n * k);
            }
            _ => self.push(e.clone(), k),
        }
    }

    fn push(&mut self, base: Expr, k: f64) {
        match self.factors.iter_mut().find(|(b, _)| *b == base) {
            Some((_, exponent)) => *exponent += k,
            None => self.factors.push((base, k)),
        }
    }

    /// Drops cancelled factors and sorts the rest into canonical order.
    fn normalize(&mut self) {
        self.factors.retain(|(_, k)| *k != 0.0);
        self.factors
            .sort_by(|a, b| compare(&a.0, &b.0).then(a.1.total_cmp(&b.1)));
    }

    fn build(mut self) -> Expr {
        self.normalize();
        build_product(self.coefficient, &self.factors)
    }
}

fn power_expr(base: &Expr, k: f64) -> Expr {
    if k == 1.0 {
        base.clone()
    } else {
        Expr::binary(BinOp::Pow, base.clone(), Expr::Number(k))
    }
}

/// `coefficient * factors` as a tree: numerator factors left to right, then `/ denominator`.
fn build_product(coefficient: f64, factors: &[(Expr, f64)]) -> Expr {
    if coefficient == 0.0 {
        return Expr::Number(0.0);
    }
    let mut numerator: Option<Expr> = None;
    for (base, k) in factors.iter().filter(|(_, k)| *k > 0.0) {
        let f = power_expr(base, *k);
        numerator = Some(match numerator {
            None if coefficient == 1.0 => f,
            None if coefficient == -1.0 => Expr::neg(f),
            None => Expr::binary(BinOp::Mul, Expr::Number(coefficient), f),
            Some(acc) => Expr::binary(BinOp::Mul, acc, f),
        });
    }
    let numerator = numerator.unwrap_or(Expr::Number(coefficient));
    let mut denominator: Option<Expr> = None;
    for (base, k) in factors.iter().filter(|(_, k)| *k < 0.0) {
        let f = power_expr(base, -*k);
        denominator = Some(match denominator {
            None => f,
            Some(acc) => Expr::binary(BinOp::Mul, acc, f),
        });
    }
    match denominator {
        None => numerator,
        Some(d) => Expr::binary(BinOp::Div, numerator, d),
    }
}

/// `constant + Σ coefficient * product`, products distinct.
#[derive(Debug, Default)]
struct Sum {
    constant: f64,
    terms: Vec<(Vec<(Expr, f64)>, f64)>,
}

impl Sum {
    /// Adds `k * e` for an already simplified `e`.
    fn add(&mut self, e: &Expr, k: f64) {
        match e {
            Expr::Number(v) => self.constant += k * v,
            Expr::Binary(BinOp::Add, a, b) => {
                self.add(a, k);
                self.add(b, k);
            }
            Expr::Binary(BinOp::Sub, a, b) => {
                self.add(a, k);
                self.add(b, -k);
            }
            Expr::Neg(a) => self.add(a, -k),
            _ => {
                let mut p = Product::default();
                p.collect(e, 1.0);
                p.normalize();
                let c = k * p.coefficient;
                if c == 0.0 {
                    return;
                }
                match p.factors.as_slice() {
                    [] => self.constant += c,
                    // A number times a sum: distribute it so that its terms can cancel.
                    [(base @ Expr::Binary(BinOp::Add | BinOp::Sub, ..), k1)] if *k1 == 1.0 => {
                        let base = base.clone();
                        self.add(&base, c);
                    }
                    _ => match self.terms.iter_mut().find(|(f, _)| *f == p.factors) {
                        Some((_, existing)) => *existing += c,
                        None => self.terms.push((p.factors, c)),
                    },
                }
            }
        }
    }

    fn build(mut self) -> Expr {
        self.terms.retain(|(_, c)| *c != 0.0);
        self.terms.sort_by(|a, b| compare_factors(&a.0, &b.0));
        // Lead with a positive term if there is one: `g*x*y - c*y` rather than `-c*y + g*x*y`.
        if let Some(i) = self.terms.iter().position(|(_, c)| *c > 0.0) {
            let t = self.terms.remove(i);
            self.terms.insert(0, t);
        }
        let mut constant = self.constant;
        let mut acc: Option<Expr> = None;
        if constant > 0.0 && self.terms.first().is_some_and(|(_, c)| *c < 0.0) {
            // `1 - x` rather than `-x + 1`.
            acc = Some(Expr::Number(constant));
            constant = 0.0;
        }
        for (factors, c) in &self.terms {
            acc = Some(match acc {
                None => build_product(*c, factors),
                Some(a) if *c < 0.0 => Expr::binary(BinOp::Sub, a, build_product(-c, factors)),
                Some(a) => Expr::binary(BinOp::Add, a, build_product(*c, factors)),
            });
        }
        match acc {
            None => Expr::Number(constant),
            Some(a) if constant == 0.0 => a,
            Some(a) if constant < 0.0 => Expr::binary(BinOp::Sub, a, Expr::Number(-constant)),
            Some(a) => Expr::binary(BinOp::Add, a, Expr::Number(constant)),
        }
    }
}

fn rank(e: &Expr) -> u8 {
    match e {
        Expr::Number(_) => 0,
        Expr::Constant(_) => 1,
        Expr::Name { .. } => 2,
        Expr::Call(..) => 3,
        Expr::Binary(BinOp::Pow, ..) => 4,
        Expr::Binary(BinOp::Mul | BinOp::Div, ..) => 5,
        Expr::Binary(BinOp::Add | BinOp::Sub, ..) => 6,
        Expr::Neg(_) => 7,
        Expr::Binary(BinOp::Min | BinOp::Max, ..) => 8,
    }
}

/// A total order on expressions (ignoring columns), used to make normal forms canonical.
pub(crate) fn compare(a: &Expr, b: &Expr) -> Ordering {
    rank(a).cmp(&rank(b)).then_with(|| match (a, b) {
        (Expr::Number(x), Expr::Number(y)) => x.total_cmp(y),
        (Expr::Constant(x), Expr::Constant(y)) => x.cmp(y),
        (Expr::Name { name: x, .. }, Expr::Name { name: y, .. }) => x.cmp(y),
        (Expr::Neg(x), Expr::Neg(y)) => compare(x, y),
        (Expr::Call(f, x), Expr::Call(g, y)) => {
            f.index().cmp(&g.index()).then_with(|| compare(x, y))
        }
        (Expr::Binary(o, x1, x2), Expr::Binary(p, y1, y2)) => o
            .index()
            .cmp(&p.index())
            .then_with(|| compare(x1, y1))
            .then_with(|| compare(x2, y2)),
        _ => Ordering::Equal,
    })
}

fn compare_factors(a: &[(Expr, f64)], b: &[(Expr, f64)]) -> Ordering {
    for ((x, j), (y, k)) in a.iter().zip(b) {
        let o = compare(x, y).then(j.total_cmp(k));
        if o != Ordering::Equal {
            return o;
        }
    }
    a.len().cmp(&b.len())
}

#[cfg(test)]
mod tests {
    use crate::expr::{Expr, parse};

    fn p(s: &str) -> Expr {
        parse(s).unwrap_or_else(|e| panic!("{s}: {e}"))
    }

    fn simp(s: &str) -> String {
        p(s).simplify().to_string()
    }

    #[test]
    fn identities_and_folding() {
        // Reference: elementary algebra, by hand.
        assert_eq!(simp("x*1 + 0"), "x");
        assert_eq!(simp("0*x + y*0"), "0");
        assert_eq!(simp("x - x"), "0");
        assert_eq!(simp("x*y - y*x"), "0");
        assert_eq!(simp("x/x"), "1");
        assert_eq!(simp("2*3 + 4"), "10");
        assert_eq!(simp("2*x + 3*x"), "5*x");
        assert_eq!(simp("x*x*x"), "x^3");
        assert_eq!(simp("x^2/x"), "x");
        assert_eq!(simp("(2*x)^2"), "4*x^2");
        assert_eq!(simp("(x^2)^3"), "x^6");
        assert_eq!(simp("x^0"), "1");
        assert_eq!(simp("x^1"), "x");
        assert_eq!(simp("1^x"), "1");
        assert_eq!(simp("-(-x)"), "x");
        assert_eq!(simp("2*(x + 1) - 2*x"), "2");
        assert_eq!(simp("exp(0) + ln(1)"), "1");
        assert_eq!(simp("ln(exp(x))"), "x");
        assert_eq!(simp("abs(-x)"), "abs(x)");
        assert_eq!(simp("min(x, x)"), "x");
        assert_eq!(simp("max(2, 3)"), "3");
        assert_eq!(simp("x/(2*y)"), "0.5*x/y");
        assert_eq!(simp("1 - x"), "1 - x");
        assert_eq!(simp("-c*y + gamma*x*y"), "gamma*x*y - c*y");
        assert_eq!(simp("a*x - alpha*x*y"), "a*x - alpha*x*y");
    }

    #[test]
    fn folding_never_creates_non_finite_numbers() {
        assert_eq!(simp("1/0"), "1/0");
        assert_eq!(simp("ln(0)"), "ln(0)");
        assert_eq!(simp("sqrt(-1)"), "sqrt(-1)");
    }

    #[test]
    fn non_integer_powers_are_not_merged_into_their_base() {
        // Reference: (x^2)^0.5 = |x|, not x, so it must stay as written.
        assert_eq!(simp("(x^2)^0.5"), "(x^2)^0.5");
        assert_eq!(simp("(x*y)^0.5"), "(x*y)^0.5");
    }

    #[test]
    fn simplification_preserves_values() {
        let formulas = [
            "a*x - alpha*x*y",
            "r*x*(1 - x/K) - q*E*x",
            "(x + 1)^2/(x + 1) - x",
            "x/(y/(x*3)) - -2*(x - y)^3",
            "-(a + b)*c/(d/e2) - (p - q)",
            "sqrt(abs(x - 1e-12)) + log10(2.5E+4) * tan(pi/7)",
            "min(x, -y)^2 + max(x*y, 0.1) - exp(-x^2)",
            "2^x*x^2.5/x^0.5",
        ];
        for f in formulas {
            let e = p(f);
            let s = e.simplify();
            for (i, &v) in [0.7, 1.3, 2.9].iter().enumerate() {
                let lookup = |n: &str| Some(v + n.len() as f64 * 0.1 + i as f64 * 0.01);
                let (a, b) = (e.eval_with(&lookup), s.eval_with(&lookup));
                assert!(
                    (a - b).abs() <= 1e-12 * (1.0 + a.abs()),
                    "{f} -> {s}: {a} vs {b}"
                );
            }
            // Simplifying twice changes nothing.
            assert_eq!(s.simplify(), s, "{f}");
        }
    }
}
