//! Printing an [`Expr`] back as formula text with as few parentheses as the grammar allows.
//!
//! What is printed parses back to the same tree (structurally), except for the internal
//! function `sign`, which the parser does not accept, and non-finite numbers (`inf`, `NaN`),
//! which have no literal.

use std::fmt;

use super::ast::{BinOp, Expr};

/// Binding strength of what an expression prints as: 1 sums, 2 products, 3 unary minus (and
/// negative literals), 4 powers, 5 atoms.
fn precedence(e: &Expr) -> u8 {
    match e {
        Expr::Number(v) if v.is_sign_negative() => 3,
        Expr::Number(_) | Expr::Constant(_) | Expr::Name { .. } | Expr::Call(..) => 5,
        Expr::Neg(_) => 3,
        Expr::Binary(op, ..) => match op {
            BinOp::Add | BinOp::Sub => 1,
            BinOp::Mul | BinOp::Div => 2,
            BinOp::Pow => 4,
            BinOp::Min | BinOp::Max => 5,
        },
    }
}

fn write_number(f: &mut fmt::Formatter<'_>, v: f64) -> fmt::Result {
    // NOTE: `{}` never uses an exponent (1e300 would print 301 digits) while `{:?}` prints
    // integers as `3.0`; integers below 1e16 are exact in `{}`, the rest take the shortest
    // round-trip form of `{:?}`, which the lexer reads back exactly (`1e-7`, `2.5e300`).
    if v.fract() == 0.0 && v.abs() < 1e16 {
        write!(f, "{v}")
    } else {
        write!(f, "{v:?}")
    }
}

fn write_at(f: &mut fmt::Formatter<'_>, e: &Expr, min_precedence: u8) -> fmt::Result {
    if precedence(e) < min_precedence {
        f.write_str("(")?;
        write_expr(f, e)?;
        f.write_str(")")
    } else {
        write_expr(f, e)
    }
}

fn write_expr(f: &mut fmt::Formatter<'_>, e: &Expr) -> fmt::Result {
    match e {
        Expr::Number(v) => write_number(f, *v),
        Expr::Constant(c) => f.write_str(c.symbol()),
        Expr::Name { name, .. } => f.write_str(name),
        Expr::Neg(a) => {
            f.write_str("-")?;
            write_at(f, a, 4)
        }
        Expr::Call(func, a) => {
            write!(f, "{}(", func.name())?;
            write_expr(f, a)?;
            f.write_str(")")
        }
        Expr::Binary(op, a, b) => {
            let (symbol, left, right) = match op {
                BinOp::Add => (" + ", 1, 2),
                BinOp::Sub => (" - ", 1, 2),
                BinOp::Mul => ("*", 2, 3),
                BinOp::Div => ("/", 2, 3),
                BinOp::Pow => ("^", 5, 3),
                BinOp::Min | BinOp::Max => {
                    let name = if *op == BinOp::Min { "min" } else { "max" };
                    write!(f, "{name}(")?;
                    write_expr(f, a)?;
                    f.write_str(", ")?;
                    write_expr(f, b)?;
                    return f.write_str(")");
                }
            };
            write_at(f, a, left)?;
            f.write_str(symbol)?;
            write_at(f, b, right)
        }
    }
}

impl fmt::Display for Expr {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write_expr(f, self)
    }
}

#[cfg(test)]
mod tests {
    use crate::expr::parse;

    fn show(src: &str) -> String {
        parse(src)
            .map(|e| e.to_string())
            .unwrap_or_else(|e| panic!("{src}: {e}"))
    }

    #[test]
    fn minimal_parentheses() {
        // Reference: common practice for infix printing.
        assert_eq!(show("a*x - alpha*x*y"), "a*x - alpha*x*y");
        assert_eq!(show("((a*x)) - ((alpha*x)*y)"), "a*x - alpha*x*y");
        assert_eq!(show("-c*y+gamma*x*y"), "-c*y + gamma*x*y");
        assert_eq!(show("a - (b - c)"), "a - (b - c)");
        assert_eq!(show("(a - b) - c"), "a - b - c");
        assert_eq!(show("a/(b*c)"), "a/(b*c)");
        assert_eq!(show("a*(b/c)"), "a*(b/c)");
        assert_eq!(show("2^3^2"), "2^3^2");
        assert_eq!(show("(2^3)^2"), "(2^3)^2");
        assert_eq!(show("-x^2"), "-x^2");
        assert_eq!(show("(-x)^2"), "(-x)^2");
        assert_eq!(show("(-2)^x"), "(-2)^x");
        assert_eq!(show("-(x*y)"), "-(x*y)");
        assert_eq!(show("-(-x)"), "-(-x)");
        assert_eq!(show("x^-y"), "x^-y");
        assert_eq!(show("x^(y*2)"), "x^(y*2)");
        assert_eq!(show("max( x ,min(y,1))"), "max(x, min(y, 1))");
        assert_eq!(show("exp(-(x))"), "exp(-x)");
        assert_eq!(show("x + -1"), "x + -1");
    }

    #[test]
    fn numbers_print_exactly_and_compactly() {
        // Reference: shortest round-trip decimal forms.
        assert_eq!(show("3.0"), "3");
        assert_eq!(show("0.1"), "0.1");
        assert_eq!(show("1e-7"), "1e-7");
        assert_eq!(show("2.5e300"), "2.5e300");
        assert_eq!(show("1e20"), "1e20");
        assert_eq!(show("-0.25"), "-0.25");
    }

    #[test]
    fn printed_formulas_parse_back_to_the_same_tree_and_value() {
        let formulas = [
            "a*x - alpha*x*y",
            "r*x*(1 - x/K) - q*E*x",
            "x^y^-2 / (1 + h*x)^2 - -3",
            "-(a + b)*c/(d/e2) - (p - q)",
            "sqrt(abs(x - 1e-12)) + log10(2.5E+4) * tan(pi/7)",
            "min(x, -y)^2 + max(x*y, 0.1)",
        ];
        for f in formulas {
            let e = parse(f).unwrap_or_else(|err| panic!("{f}: {err}"));
            let printed = e.to_string();
            let again = parse(&printed).unwrap_or_else(|err| panic!("{printed}: {err}"));
            assert_eq!(again, e, "{f} printed as {printed}");
            let lookup = |_: &str| Some(0.7);
            let (v, w) = (e.eval_with(&lookup), again.eval_with(&lookup));
            assert!(
                v.to_bits() == w.to_bits() || (v.is_nan() && w.is_nan()),
                "{f}"
            );
        }
    }
}
