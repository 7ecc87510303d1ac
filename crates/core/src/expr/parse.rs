//! Turning the text of a rate formula into an [`Expr`], with errors that say where and why.
//!
//! Grammar (lowest to highest precedence):
//!
//! ```text
//! sum     := product (('+' | '-') product)*
//! product := unary (('*' | '/') unary)*
//! unary   := ('-' | '+') unary | power
//! power   := atom ('^' unary)?              -- right-associative, binds tighter than unary minus
//! atom    := number | name | name '(' sum (',' sum)* ')' | '(' sum ')'
//! ```
//!
//! The recursion depth and the height of the tree are both bounded, so no input can overflow
//! the stack here or in the recursive passes (printing, derivatives, dropping) downstream.

use super::ast::{BinOp, Constant, Expr};
use super::tape::Func;

/// Deepest nesting of parentheses, unary signs and exponents accepted by [`parse`].
pub const MAX_NESTING: usize = 256;

/// Tallest tree [`parse`] builds (a long chain such as `x+x+…+x` is tall without nesting).
/// NOTE: derivatives, simplification and printing recurse over the tree; this bound keeps
/// them well inside a 2 MiB thread stack even in debug builds.
pub const MAX_HEIGHT: usize = 256;

/// Why a formula was rejected, and where.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
#[error("column {column}: {message}")]
pub struct ParseError {
    /// 1-based column, counted in chars, of the offending spot.
    pub column: usize,
    /// What is wrong, in words meant for the person who typed the formula.
    pub message: String,
}

fn error<T>(column: usize, message: impl Into<String>) -> Result<T, ParseError> {
    Err(ParseError {
        column,
        message: message.into(),
    })
}

#[derive(Clone, Debug, PartialEq)]
enum Tok {
    Num(f64),
    Ident(String),
    Plus,
    Minus,
    Star,
    Slash,
    Caret,
    LParen,
    RParen,
    Comma,
    End,
}

#[derive(Clone, Debug)]
struct Token {
    tok: Tok,
    /// 1-based char column of the first char.
    column: usize,
    /// The source text (empty for `End`).
    text: String,
}

fn lex(src: &str) -> Result<Vec<Token>, ParseError> {
    let chars: Vec<char> = src.chars().collect();
    let mut tokens = Vec::new();
    let mut i = 0;
    while let Some(&c) = chars.get(i) {
        let column = i + 1;
        if c.is_whitespace() {
            i += 1;
            continue;
        }
        let single = match c {
            '+' => Some(Tok::Plus),
            '-' => Some(Tok::Minus),
            '*' => Some(Tok::Star),
            '/' => Some(Tok::Slash),
            '^' => Some(Tok::Caret),
            '(' => Some(Tok::LParen),
            ')' => Some(Tok::RParen),
            ',' => Some(Tok::Comma),
            _ => None,
        };
        if let Some(tok) = single {
            tokens.push(Token {
                tok,
                column,
                text: c.to_string(),
            });
            i += 1;
        } else if c.is_ascii_digit() || c == '.' {
            let start = i;
            while chars
                .get(i)
                .is_some_and(|&d| d.is_ascii_digit() || d == '.')
            {
                i += 1;
            }
            // An exponent only if digits follow `e`, possibly after a sign; otherwise `2e` is
            // the number 2 followed by the name `e`, which the parser reports as a missing `*`.
            if chars.get(i).is_some_and(|&d| d == 'e' || d == 'E') {
                let digit_at = |k: usize| chars.get(k).is_some_and(|d| d.is_ascii_digit());
                let signed = chars.get(i + 1).is_some_and(|&d| d == '+' || d == '-');
                if digit_at(i + 1) || (signed && digit_at(i + 2)) {
                    i += if signed { 2 } else { 1 };
                    while digit_at(i) {
                        i += 1;
                    }
                } else if signed {
                    let text: String = chars[start..i + 2].iter().collect();
                    return error(
                        column,
                        format!("malformed number '{text}': the exponent has no digits"),
                    );
                }
            }
            let text: String = chars[start..i].iter().collect();
            if text.matches('.').count() > 1 {
                return error(
                    column,
                    format!("malformed number '{text}': more than one decimal point"),
                );
            }
            let Ok(v) = text.parse::<f64>() else {
                return error(column, format!("malformed number '{text}'"));
            };
            if !v.is_finite() {
                return error(column, format!("number '{text}' is too large"));
            }
            tokens.push(Token {
                tok: Tok::Num(v),
                column,
                text,
            });
        } else if c.is_ascii_alphabetic() || c == '_' {
            let start = i;
            while chars
                .get(i)
                .is_some_and(|&d| d.is_ascii_alphanumeric() || d == '_')
            {
                i += 1;
            }
            let text: String = chars[start..i].iter().collect();
            tokens.push(Token {
                tok: Tok::Ident(text.clone()),
                column,
                text,
            });
        } else {
            return error(column, format!("unknown character '{c}'"));
        }
    }
    tokens.push(Token {
        tok: Tok::End,
        column: chars.len() + 1,
        text: String::new(),
    });
    Ok(tokens)
}

/// Parses one formula, e.g. `a*x - alpha*x*y`.
///
/// Names are not resolved here (see [`super::compile`]); `pi` and `e` are the constants.
///
/// # Errors
///
/// Every malformed input gives a [`ParseError`] with the 1-based column of the problem.
pub fn parse(src: &str) -> Result<Expr, ParseError> {
    let tokens = lex(src)?;
    let mut parser = Parser {
        tokens,
        pos: 0,
        depth: 0,
    };
    parser.expect_operand(None)?;
    let (expr, _) = parser.sum()?;
    let next = parser.peek();
    match next.tok {
        Tok::End => Ok(expr),
        Tok::RParen => error(next.column, "unmatched ')'"),
        Tok::Comma => error(next.column, "',' outside the arguments of 'min' or 'max'"),
        _ => parser.missing_operator(),
    }
}

/// An expression with the height of its tree.
type Node = (Expr, usize);

struct Parser {
    tokens: Vec<Token>,
    pos: usize,
    depth: usize,
}

const EXPECTED: &str = "expected a number, name or '('";

impl Parser {
    fn peek(&self) -> &Token {
        // `lex` always ends the list with `End`, and `advance` never moves past it.
        &self.tokens[self.pos.min(self.tokens.len() - 1)]
    }

    fn advance(&mut self) -> Token {
        let t = self.peek().clone();
        if self.pos + 1 < self.tokens.len() {
            self.pos += 1;
        }
        t
    }

    /// Checks that the next token can start an operand; `after` is the token just consumed
    /// (an operator, `(` or `,`), `None` at the start of the formula.
    fn expect_operand(&self, after: Option<&Token>) -> Result<(), ParseError> {
        let next = self.peek();
        match (&next.tok, after) {
            (Tok::Num(_) | Tok::Ident(_) | Tok::LParen | Tok::Plus | Tok::Minus, _) => Ok(()),
            (Tok::End, None) => error(1, "empty formula"),
            (Tok::End, Some(op)) => error(op.column, format!("{EXPECTED} after '{}'", op.text)),
            (Tok::RParen, None) => error(next.column, "unmatched ')'"),
            (Tok::RParen, Some(op)) if op.tok == Tok::LParen => {
                error(next.column, "empty parentheses")
            }
            (Tok::Star, Some(op)) if op.tok == Tok::Star => error(
                op.column,
                "'**' is not an operator; write powers with '^', e.g. 'x^2'",
            ),
            (_, None) => error(next.column, format!("{EXPECTED}, found '{}'", next.text)),
            (_, Some(op)) => error(
                next.column,
                format!("{EXPECTED} after '{}', found '{}'", op.text, next.text),
            ),
        }
    }

    /// The error for an operand directly followed by something that starts another operand.
    fn missing_operator<T>(&self) -> Result<T, ParseError> {
        let next = self.peek();
        let before = self
            .pos
            .checked_sub(1)
            .and_then(|k| self.tokens.get(k))
            .map_or(String::new(), |t| t.text.clone());
        error(
            next.column,
            format!(
                "missing operator between '{before}' and '{}' (to multiply, write '*')",
                next.text
            ),
        )
    }

    fn combine(op: BinOp, a: Node, b: Node, column: usize) -> Result<Node, ParseError> {
        let height = a.1.max(b.1) + 1;
        if height > MAX_HEIGHT {
            return error(
                column,
                format!("formula is too long (its tree would be deeper than {MAX_HEIGHT})"),
            );
        }
        Ok((Expr::binary(op, a.0, b.0), height))
    }

    fn sum(&mut self) -> Result<Node, ParseError> {
        let mut lhs = self.product()?;
        loop {
            let op = match self.peek().tok {
                Tok::Plus => BinOp::Add,
                Tok::Minus => BinOp::Sub,
                _ => return Ok(lhs),
            };
            let t = self.advance();
            self.expect_operand(Some(&t))?;
            let rhs = self.product()?;
            lhs = Self::combine(op, lhs, rhs, t.column)?;
        }
    }

    fn product(&mut self) -> Result<Node, ParseError> {
        let mut lhs = self.unary()?;
        loop {
            let op = match self.peek().tok {
                Tok::Star => BinOp::Mul,
                Tok::Slash => BinOp::Div,
                _ => return Ok(lhs),
            };
            let t = self.advance();
            self.expect_operand(Some(&t))?;
            let rhs = self.unary()?;
            lhs = Self::combine(op, lhs, rhs, t.column)?;
        }
    }

    fn unary(&mut self) -> Result<Node, ParseError> {
        if self.depth >= MAX_NESTING {
            return error(
                self.peek().column,
                format!("formula is nested too deeply (more than {MAX_NESTING} levels)"),
            );
        }
        self.depth += 1;
        let result = self.unary_inner();
        self.depth -= 1;
        result
    }

    fn unary_inner(&mut self) -> Result<Node, ParseError> {
        let negate = match self.peek().tok {
            Tok::Minus => true,
            Tok::Plus => false,
            _ => return self.power(),
        };
        let t = self.advance();
        self.expect_operand(Some(&t))?;
        let (inner, height) = self.unary()?;
        if !negate {
            return Ok((inner, height));
        }
        Ok(match inner {
            Expr::Number(v) => (Expr::Number(-v), height),
            other => (Expr::neg(other), height + 1),
        })
    }

    fn power(&mut self) -> Result<Node, ParseError> {
        let base = self.atom()?;
        if self.peek().tok != Tok::Caret {
            return Ok(base);
        }
        let t = self.advance();
        self.expect_operand(Some(&t))?;
        let exponent = self.unary()?;
        Self::combine(BinOp::Pow, base, exponent, t.column)
    }

    fn atom(&mut self) -> Result<Node, ParseError> {
        let t = self.advance();
        match t.tok {
            Tok::Num(v) => Ok((Expr::Number(v), 1)),
            Tok::LParen => {
                self.expect_operand(Some(&t))?;
                let inner = self.sum()?;
                self.close(&t)?;
                Ok(inner)
            }
            Tok::Ident(ref name) => {
                if self.peek().tok == Tok::LParen {
                    self.call(&t, name)
                } else if Func::from_name(name).is_some() || name == "min" || name == "max" {
                    error(
                        t.column,
                        format!(
                            "'{name}' is a function: write its argument in parentheses, e.g. '{name}(x)'"
                        ),
                    )
                } else if let Some(c) = Constant::from_name(name) {
                    Ok((Expr::Constant(c), 1))
                } else {
                    Ok((
                        Expr::Name {
                            name: name.clone(),
                            column: t.column,
                        },
                        1,
                    ))
                }
            }
            // `expect_operand` has already rejected everything else; keep a clear message anyway.
            _ => error(t.column, format!("{EXPECTED}, found '{}'", t.text)),
        }
    }

    /// Consumes the `)` matching `open`, or explains what is there instead.
    fn close(&mut self, open: &Token) -> Result<(), ParseError> {
        let next = self.peek();
        match next.tok {
            Tok::RParen => {
                self.advance();
                Ok(())
            }
            Tok::End => error(open.column, "unclosed '(' (no matching ')')"),
            Tok::Comma => error(
                next.column,
                "',' separates arguments, but these parentheses do not belong to 'min' or 'max'",
            ),
            _ => self.missing_operator(),
        }
    }

    fn call(&mut self, name_token: &Token, name: &str) -> Result<Node, ParseError> {
        enum Callee {
            Unary(Func),
            Binary(BinOp),
        }
        let callee = if let Some(f) = Func::from_name(name) {
            Callee::Unary(f)
        } else if name == "min" {
            Callee::Binary(BinOp::Min)
        } else if name == "max" {
            Callee::Binary(BinOp::Max)
        } else if Constant::from_name(name).is_some() {
            return error(
                name_token.column,
                format!("'{name}' is a constant, not a function (to multiply, write '{name}*(…)')"),
            );
        } else {
            return error(name_token.column, format!("unknown function '{name}'"));
        };
        let open = self.advance();
        let mut args: Vec<Node> = Vec::new();
        if self.peek().tok == Tok::RParen {
            self.advance();
        } else {
            loop {
                self.expect_operand(Some(&open))?;
                args.push(self.sum()?);
                let next = self.peek();
                match next.tok {
                    Tok::Comma => {
                        let comma = self.advance();
                        self.expect_operand(Some(&comma))?;
                    }
                    Tok::RParen => {
                        self.advance();
                        break;
                    }
                    Tok::End => return error(open.column, "unclosed '(' (no matching ')')"),
                    _ => return self.missing_operator(),
                }
            }
        }
        let wanted = match callee {
            Callee::Unary(_) => 1,
            Callee::Binary(_) => 2,
        };
        if args.len() != wanted {
            let plural = if wanted == 1 { "argument" } else { "arguments" };
            return error(
                name_token.column,
                format!("'{name}' takes {wanted} {plural}, got {}", args.len()),
            );
        }
        let mut args = args.into_iter();
        match (callee, args.next(), args.next()) {
            (Callee::Unary(f), Some((a, h)), None) => {
                if h + 1 > MAX_HEIGHT {
                    return error(name_token.column, "formula is too long");
                }
                Ok((Expr::call(f, a), h + 1))
            }
            (Callee::Binary(op), Some(a), Some(b)) => Self::combine(op, a, b, name_token.column),
            _ => error(
                name_token.column,
                format!("wrong number of arguments to '{name}'"),
            ),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn value(src: &str) -> f64 {
        let e = parse(src).unwrap_or_else(|err| panic!("{src}: {err}"));
        e.eval_with(&|n| match n {
            "x" => Some(3.0),
            "y" => Some(0.5),
            _ => None,
        })
    }

    fn err(src: &str) -> (usize, String) {
        match parse(src) {
            Ok(e) => panic!("{src:?} parsed as {e:?}"),
            Err(e) => (e.column, e.message),
        }
    }

    #[test]
    fn numbers_in_every_documented_form() {
        // Reference: the decimal values themselves.
        assert_eq!(value("1"), 1.0);
        assert_eq!(value("0.5"), 0.5);
        assert_eq!(value(".5"), 0.5);
        assert_eq!(value("1e-3"), 0.001);
        assert_eq!(value("2.5E+4"), 25000.0);
        assert_eq!(value("7."), 7.0);
    }

    #[test]
    fn precedence_and_associativity_match_hand_computed_values() {
        // Reference: hand-computed with x = 3, y = 0.5.
        assert_eq!(value("1 + 2*3"), 7.0);
        assert_eq!(value("(1 + 2)*3"), 9.0);
        assert_eq!(value("2^3^2"), 512.0);
        assert_eq!(value("(2^3)^2"), 64.0);
        assert_eq!(value("-x^2"), -9.0);
        assert_eq!(value("(-x)^2"), 9.0);
        assert_eq!(value("2^-1"), 0.5);
        assert_eq!(value("2^-x^2"), 2f64.powi(-9));
        assert_eq!(value("10 - 4 - 3"), 3.0);
        assert_eq!(value("64 / 4 / 2"), 8.0);
        assert_eq!(value("8 / 2 * 4"), 16.0);
        assert_eq!(value("x - -y"), 3.5);
        assert_eq!(value("x*-y"), -1.5);
        assert_eq!(value("+x"), 3.0);
        assert_eq!(value("--x"), 3.0);
        assert_eq!(value("-2^2"), -4.0);
        assert_eq!(value("1 - x*y + x/y"), 1.0 - 1.5 + 6.0);
        assert_eq!(value(" \t x\n*  y "), 1.5);
    }

    #[test]
    fn functions_and_constants() {
        // Reference: closed forms of the functions at the given points.
        assert_eq!(value("exp(0)"), 1.0);
        assert_eq!(value("ln(e)"), 1.0);
        assert_eq!(value("log10(1000)"), 3.0);
        assert_eq!(value("sqrt(16)"), 4.0);
        assert_eq!(value("abs(-x)"), 3.0);
        assert_eq!(value("sin(0)"), 0.0);
        assert_eq!(value("cos(pi)"), -1.0);
        assert_eq!(value("tan(0)"), 0.0);
        assert_eq!(value("min(x, y)"), 0.5);
        assert_eq!(value("max(x, y)"), 3.0);
        assert_eq!(value("max(min(1, 2), -1)"), 1.0);
        assert_eq!(value("2*sin(pi/2)^2"), 2.0);
    }

    #[test]
    fn names_are_case_sensitive_and_may_contain_digits_and_underscores() {
        let e = parse("K_1 + k_1 + _x2").unwrap_or_else(|e| panic!("{e}"));
        let names: Vec<String> = e.identifiers().into_iter().map(|(n, _)| n).collect();
        assert_eq!(names, ["K_1", "k_1", "_x2"]);
    }

    #[test]
    fn empty_formula() {
        assert_eq!(err(""), (1, "empty formula".to_owned()));
        assert_eq!(err("   "), (1, "empty formula".to_owned()));
    }

    #[test]
    fn trailing_operator_points_at_the_operator() {
        // Reference: columns counted by hand.
        assert_eq!(
            err("x + y +"),
            (7, "expected a number, name or '(' after '+'".to_owned())
        );
        assert_eq!(
            err("x^"),
            (2, "expected a number, name or '(' after '^'".to_owned())
        );
        assert_eq!(
            err("-"),
            (1, "expected a number, name or '(' after '-'".to_owned())
        );
    }

    #[test]
    fn a_misplaced_token_is_named_at_its_column() {
        assert_eq!(
            err("x + * y"),
            (
                5,
                "expected a number, name or '(' after '+', found '*'".to_owned()
            )
        );
        assert_eq!(
            err("*x"),
            (1, "expected a number, name or '(', found '*'".to_owned())
        );
        assert_eq!(err("x ** 2").0, 3);
        assert!(err("x ** 2").1.contains("'^'"));
        assert_eq!(err("max(1,)").0, 7);
    }

    #[test]
    fn unbalanced_parentheses() {
        assert_eq!(err("(x + y").0, 1);
        assert_eq!(err("(x + y").1, "unclosed '(' (no matching ')')");
        assert_eq!(err("2*((x) + y").0, 3);
        assert_eq!(err("sin(x").0, 4);
        assert_eq!(err("max(x, y").0, 4);
        assert_eq!(err("x + y)"), (6, "unmatched ')'".to_owned()));
        assert_eq!(err(")"), (1, "unmatched ')'".to_owned()));
        assert_eq!(err("()"), (2, "empty parentheses".to_owned()));
        assert_eq!(
            err("x*("),
            (3, "expected a number, name or '(' after '('".to_owned())
        );
    }

    #[test]
    fn unknown_and_misused_functions() {
        assert_eq!(err("2*sinh(x)"), (3, "unknown function 'sinh'".to_owned()));
        assert_eq!(err("sign(x)"), (1, "unknown function 'sign'".to_owned()));
        assert_eq!(err("x(2)"), (1, "unknown function 'x'".to_owned()));
        assert_eq!(err("1 + pi(2)").0, 5);
        assert!(
            err("1 + pi(2)")
                .1
                .starts_with("'pi' is a constant, not a function")
        );
        assert_eq!(err("e (x)").0, 1);
        assert_eq!(
            err("x + sin"),
            (
                5,
                "'sin' is a function: write its argument in parentheses, e.g. 'sin(x)'".to_owned()
            )
        );
        assert_eq!(err("max + 1").0, 1);
        assert_eq!(err("sin x").0, 1);
    }

    #[test]
    fn wrong_argument_counts() {
        assert_eq!(
            err("max(x)"),
            (1, "'max' takes 2 arguments, got 1".to_owned())
        );
        assert_eq!(
            err("y + min(x, y, 1)"),
            (5, "'min' takes 2 arguments, got 3".to_owned())
        );
        assert_eq!(
            err("sin(x, y)"),
            (1, "'sin' takes 1 argument, got 2".to_owned())
        );
        assert_eq!(
            err("exp()"),
            (1, "'exp' takes 1 argument, got 0".to_owned())
        );
    }

    #[test]
    fn unknown_characters() {
        assert_eq!(err("x # y"), (3, "unknown character '#'".to_owned()));
        assert_eq!(err("x = 1"), (3, "unknown character '='".to_owned()));
        assert_eq!(err("\u{a0}x²"), (3, "unknown character '²'".to_owned()));
        assert_eq!(err("a·b"), (2, "unknown character '·'".to_owned()));
    }

    #[test]
    fn malformed_numbers() {
        assert_eq!(
            err("x + 1.2.3"),
            (
                5,
                "malformed number '1.2.3': more than one decimal point".to_owned()
            )
        );
        assert_eq!(err("."), (1, "malformed number '.'".to_owned()));
        assert_eq!(
            err("2e+"),
            (
                1,
                "malformed number '2e+': the exponent has no digits".to_owned()
            )
        );
        assert_eq!(err("1e999"), (1, "number '1e999' is too large".to_owned()));
    }

    #[test]
    fn implicit_multiplication_is_a_missing_operator() {
        assert_eq!(
            err("2x"),
            (
                2,
                "missing operator between '2' and 'x' (to multiply, write '*')".to_owned()
            )
        );
        assert_eq!(err("x y").0, 3);
        assert_eq!(err("(x)(y)").0, 4);
        assert_eq!(err("2(x)").0, 2);
        assert_eq!(err("2e").0, 2);
        assert_eq!(err("min(x y, 1)").0, 7);
        assert_eq!(err("(x, y)").0, 3);
        assert_eq!(err("x, y").0, 2);
    }

    #[test]
    fn deep_nesting_is_an_error_not_a_stack_overflow() {
        let deep = "(".repeat(100_000) + "x" + &")".repeat(100_000);
        let (column, message) = err(&deep);
        assert_eq!(column, MAX_NESTING + 1);
        assert!(message.contains("nested too deeply"), "{message}");
        assert!(parse(&"-".repeat(100_000)).is_err());
        assert!(parse(&"2^".repeat(100_000)).is_err());
        assert!(parse(&"sin(".repeat(100_000)).is_err());
        // Just inside the limit is fine.
        let ok = "(".repeat(MAX_NESTING - 1) + "x" + &")".repeat(MAX_NESTING - 1);
        assert!(parse(&ok).is_ok());
    }

    #[test]
    fn long_flat_chains_are_bounded_too() {
        let long = vec!["x"; 100_000].join("+");
        let (column, message) = err(&long);
        assert!(message.contains("too long"), "{message}");
        assert_eq!(column, 2 * MAX_HEIGHT);
        let fine = vec!["x"; MAX_HEIGHT].join("+");
        assert!(parse(&fine).is_ok());
    }

    /// xorshift64*: deterministic and good enough to shuffle an alphabet.
    struct Rng(u64);
    impl Rng {
        fn next(&mut self) -> u64 {
            self.0 ^= self.0 >> 12;
            self.0 ^= self.0 << 25;
            self.0 ^= self.0 >> 27;
            self.0.wrapping_mul(0x2545_F491_4F6C_DD1D)
        }
        fn below(&mut self, n: usize) -> usize {
            (self.next() % n as u64) as usize
        }
    }

    #[test]
    fn random_strings_from_the_alphabet_never_panic() {
        const PIECES: &[&str] = &[
            "x", "y", "a", "1", "0.5", ".", "e", "E", "pi", "2e3", "+", "-", "*", "/", "^", "(",
            ")", ",", " ", "sin", "min", "max", "ln", "sqrt(", "abs(", "_", "9", "#", "é",
        ];
        let mut rng = Rng(0x9E37_79B9_7F4A_7C15);
        let mut accepted = 0;
        for _ in 0..20_000 {
            let len = rng.below(12);
            let s: String = (0..len).map(|_| PIECES[rng.below(PIECES.len())]).collect();
            match parse(&s) {
                Ok(e) => {
                    accepted += 1;
                    // Whatever parses must print to something that parses to the same tree.
                    let printed = e.to_string();
                    let again =
                        parse(&printed).unwrap_or_else(|err| panic!("{s:?} -> {printed:?}: {err}"));
                    assert_eq!(again, e, "{s:?} -> {printed:?}");
                }
                Err(err) => {
                    let n = s.chars().count();
                    assert!(err.column >= 1 && err.column <= n + 1, "{s:?}: {err}");
                    assert!(!err.message.is_empty());
                }
            }
        }
        // The loop must exercise the success path as well as the failure path.
        assert!(accepted > 500, "only {accepted} accepted");
    }

    #[test]
    fn every_truncation_of_valid_formulas_is_handled() {
        let formulas = [
            "a*x - alpha*x*y",
            "-c*y + gamma*x*y",
            "r*x*(1 - x/K) - q*E*x/(1 + h*max(x, 0.5e-3))",
            "exp(-x^2/2)/sqrt(2*pi) + log10(abs(y) + 1)",
        ];
        for f in formulas {
            assert!(parse(f).is_ok(), "{f}");
            for (k, _) in f.char_indices() {
                let cut = &f[..k];
                if let Err(e) = parse(cut) {
                    assert!(
                        e.column >= 1 && e.column <= cut.chars().count() + 1,
                        "{cut:?}: {e}"
                    );
                }
            }
        }
    }

    #[test]
    fn display_of_a_parse_error_leads_with_the_column() {
        let e = parse("2*sinh(x)").err().map(|e| e.to_string());
        assert_eq!(e.as_deref(), Some("column 3: unknown function 'sinh'"));
    }
}
