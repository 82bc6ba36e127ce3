//! Formulas `y = f(x)` for function generation, parsed and evaluated by the `exmex` crate.
//!
//! The syntax is ordinary mathematics in one variable `x`:
//!
//! - numbers `2`, `0.5`, `.5`, `1e-3`, `2.5E+2`;
//! - operators `+ - * / ^` with the usual precedence (`^` above `* /` above `+ -`), and signs
//!   (`-x`, `2^-1`);
//! - constants `pi` and `e`;
//! - functions, with the argument in parentheses: `sin cos tan asin acos atan sinh cosh tanh
//!   exp ln log10 log2 sqrt abs`. Angles are radians. `ln` is the natural logarithm and
//!   `log10` the common one; a bare `log` is refused as ambiguous.
//!
//! Two forms that mathematicians and programming languages read differently are refused with
//! a message that says how to write them: a sign in front of a power (`-x^2`: write `-(x^2)`
//! or `(-x)^2`) and a chain of powers (`2^3^2`: write `2^(3^2)` or `(2^3)^2`). The parser
//! itself is `exmex` (a maintained expression parser); this module checks the text first so
//! that each error names its column (1-based, counted in characters) and the token at fault.
//!
//! ```
//! use crankwright::exact::formula::Formula;
//! let f = Formula::parse("log10(x)")?;
//! assert!((f.eval(100.0)? - 2.0).abs() < 1e-15);
//! assert!(f.check_range(1.0, 2.0, 50).is_ok());
//! assert!(f.check_range(-1.0, 2.0, 50).is_err()); // undefined for x <= 0
//! # Ok::<(), crankwright::exact::formula::FormulaError>(())
//! ```

use std::fmt;

use exmex::prelude::*;
use exmex::{FloatOpsFactory, MakeOperators, MatchLiteral, Operator};

/// Functions a formula may call (all one argument, radians for the trigonometric ones).
pub const FUNCTIONS: &[&str] = &[
    "sin", "cos", "tan", "asin", "acos", "atan", "sinh", "cosh", "tanh", "exp", "ln", "log10",
    "log2", "sqrt", "abs",
];

/// Named constants a formula may use.
pub const CONSTANTS: &[&str] = &["pi", "e"];

/// The one variable of a formula.
pub const VARIABLE: &str = "x";

/// Errors from parsing or evaluating a formula. Columns are 1-based character positions.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FormulaError {
    /// The text is empty or blank.
    #[error("the formula is empty")]
    Empty,
    /// A character that is not part of the formula syntax.
    #[error("unexpected character '{found}' at column {column}")]
    UnexpectedCharacter {
        /// Column of the character.
        column: usize,
        /// The character.
        found: char,
    },
    /// A name followed by `(` that is not one of [`FUNCTIONS`].
    #[error("unknown function '{name}' at column {column} (known: {})", FUNCTIONS.join(", "))]
    UnknownFunction {
        /// Column where the name starts.
        column: usize,
        /// The name as written.
        name: String,
    },
    /// A name that is neither the variable `x` nor a constant.
    #[error("unknown name '{name}' at column {column}: the variable is x, the constants pi and e")]
    UnknownName {
        /// Column where the name starts.
        column: usize,
        /// The name as written.
        name: String,
    },
    /// `log` without a base.
    #[error("'log' at column {column} is ambiguous: write ln(...) for the natural logarithm or log10(...)")]
    AmbiguousLog {
        /// Column of `log`.
        column: usize,
    },
    /// A function name not followed by its parenthesised argument.
    #[error(
        "function '{name}' at column {column} needs its argument in parentheses, e.g. {name}(x)"
    )]
    MissingArgument {
        /// Column of the function name.
        column: usize,
        /// The function.
        name: String,
    },
    /// A `(` that is never closed.
    #[error("the '(' at column {column} is never closed")]
    UnclosedParenthesis {
        /// Column of the `(`.
        column: usize,
    },
    /// A `)` without a matching `(`.
    #[error("the ')' at column {column} has no matching '('")]
    UnmatchedParenthesis {
        /// Column of the `)`.
        column: usize,
    },
    /// Two values side by side, as in `2x` or `(x)(x)`.
    #[error("missing operator before '{found}' at column {column} (write 2*x, not 2x)")]
    MissingOperator {
        /// Column of the second value.
        column: usize,
        /// The token found there.
        found: String,
    },
    /// An operator or `)` where a value should stand, as in `x*/2`, `()` or a trailing `+`.
    #[error("a value is missing before '{found}' at column {column}")]
    MissingValue {
        /// Column of the token found instead (one past the end for the end of the text).
        column: usize,
        /// The token found there (`end of formula` at the end).
        found: String,
    },
    /// A sign in front of a power, `-a^b`, which readers take as `-(a^b)` and the parser as
    /// `(-a)^b`.
    #[error("'-...^' at column {column} is ambiguous: write -(a^b) or (-a)^b")]
    AmbiguousSign {
        /// Column of the sign.
        column: usize,
    },
    /// A chain of powers, `a^b^c`.
    #[error("the chained power at column {column} is ambiguous: write a^(b^c) or (a^b)^c")]
    ChainedPower {
        /// Column of the second `^`.
        column: usize,
    },
    /// The expression parser refused the text (after the checks above; not expected).
    #[error("cannot parse the formula: {message}")]
    Parse {
        /// The parser's message.
        message: String,
    },
    /// The expression evaluator failed.
    #[error("cannot evaluate the formula at x = {x}: {message}")]
    Eval {
        /// The argument.
        x: f64,
        /// The evaluator's message.
        message: String,
    },
    /// The argument is NaN or infinite.
    #[error("x must be finite, got {x}")]
    BadArgument {
        /// The argument.
        x: f64,
    },
    /// The value is NaN or infinite: the formula is undefined there (`ln(0)`, `sqrt(-1)`,
    /// `1/0`...).
    #[error("the formula is undefined at x = {x} (value {value})")]
    Undefined {
        /// The argument.
        x: f64,
        /// The value found (NaN or infinite).
        value: f64,
    },
    /// The formula is undefined at some samples of a range.
    #[error(
        "the formula is undefined on [{x0}, {xf}] at {count} of {samples} samples, \
         first at x = {first}, last at x = {last}"
    )]
    UndefinedInRange {
        /// Start of the range.
        x0: f64,
        /// End of the range.
        xf: f64,
        /// First sample (from `x0`) where the value is not finite.
        first: f64,
        /// Last such sample.
        last: f64,
        /// How many samples failed.
        count: usize,
        /// How many samples were taken.
        samples: usize,
    },
    /// A range to check that is not finite or has fewer than two samples.
    #[error(
        "bad range [{x0}, {xf}] with {samples} samples: need finite ends and at least 2 samples"
    )]
    BadRange {
        /// Start of the range.
        x0: f64,
        /// End of the range.
        xf: f64,
        /// Samples asked for.
        samples: usize,
    },
}

/// The operator set handed to `exmex`: its float operators restricted to the documented
/// syntax, plus the lower-case constant `pi`.
#[derive(Clone, Debug)]
struct Ops;

impl MakeOperators<f64> for Ops {
    fn make<'a>() -> Vec<Operator<'a, f64>> {
        let mut ops: Vec<Operator<'a, f64>> = FloatOpsFactory::<f64>::make()
            .into_iter()
            .filter(|op| {
                let r = op.repr();
                ["+", "-", "*", "/", "^", "e"].contains(&r) || FUNCTIONS.contains(&r)
            })
            .collect();
        ops.push(Operator::make_constant("pi", std::f64::consts::PI));
        ops
    }
}

/// Number literals, with an optional exponent (`1e-3`): the same rule as the checker's.
#[derive(Clone, Debug)]
struct Numbers;

impl MatchLiteral for Numbers {
    fn is_literal(text: &str) -> Option<&str> {
        let n = number_len(text);
        (n > 0).then(|| &text[..n])
    }
}

/// Length in bytes of the number literal at the start of `text` (0 when there is none):
/// `digits [. digits]` or `. digits`, then optionally `e|E [+|-] digits`.
fn number_len(text: &str) -> usize {
    let b = text.as_bytes();
    let digits = |mut i: usize| {
        while i < b.len() && b[i].is_ascii_digit() {
            i += 1;
        }
        i
    };
    let mut i = digits(0);
    let int_digits = i;
    let mut frac_digits = 0;
    if i < b.len() && b[i] == b'.' {
        let j = digits(i + 1);
        frac_digits = j - i - 1;
        i = j;
    }
    if int_digits == 0 && frac_digits == 0 {
        return 0;
    }
    if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
        let mut j = i + 1;
        if j < b.len() && (b[j] == b'+' || b[j] == b'-') {
            j += 1;
        }
        let k = digits(j);
        if k > j {
            i = k;
        }
    }
    i
}

type Expr = FlatEx<f64, Ops, Numbers>;

/// A parsed formula `y = f(x)`.
#[derive(Clone)]
pub struct Formula {
    text: String,
    expr: Expr,
    uses_x: bool,
}

impl fmt::Debug for Formula {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("Formula").field("text", &self.text).finish()
    }
}

impl fmt::Display for Formula {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.text)
    }
}

impl Formula {
    /// Parses `text` (see the module documentation for the syntax).
    ///
    /// # Errors
    /// A [`FormulaError`] naming the column and token at fault.
    pub fn parse(text: &str) -> Result<Self, FormulaError> {
        let uses_x = check(text)?;
        let expr = Expr::parse(text).map_err(|e| FormulaError::Parse {
            message: e.msg().to_string(),
        })?;
        Ok(Self {
            text: text.to_string(),
            expr,
            uses_x,
        })
    }

    /// The text the formula was parsed from.
    pub fn text(&self) -> &str {
        &self.text
    }

    /// Whether the formula depends on `x` (a constant formula does not).
    pub fn uses_x(&self) -> bool {
        self.uses_x
    }

    /// Value of the formula at `x`.
    ///
    /// # Errors
    /// [`FormulaError::BadArgument`] for a non-finite `x`, [`FormulaError::Undefined`] when
    /// the value is NaN or infinite, [`FormulaError::Eval`] if the evaluator fails.
    pub fn eval(&self, x: f64) -> Result<f64, FormulaError> {
        if !x.is_finite() {
            return Err(FormulaError::BadArgument { x });
        }
        let vars: &[f64] = if self.uses_x { &[x] } else { &[] };
        let value = self.expr.eval(vars).map_err(|e| FormulaError::Eval {
            x,
            message: e.msg().to_string(),
        })?;
        if value.is_finite() {
            Ok(value)
        } else {
            Err(FormulaError::Undefined { x, value })
        }
    }

    /// Evaluates the formula at `samples` evenly spaced points from `x0` to `xf` (both ends
    /// included) and reports where it is undefined.
    ///
    /// # Errors
    /// [`FormulaError::UndefinedInRange`] with the first and last failing samples and their
    /// count; [`FormulaError::BadRange`] for non-finite ends or fewer than two samples.
    pub fn check_range(&self, x0: f64, xf: f64, samples: usize) -> Result<(), FormulaError> {
        if !(x0.is_finite() && xf.is_finite()) || samples < 2 {
            return Err(FormulaError::BadRange { x0, xf, samples });
        }
        let mut bad: Option<(f64, f64, usize)> = None;
        for i in 0..samples {
            let t = i as f64 / (samples - 1) as f64;
            let x = if i + 1 == samples {
                xf
            } else {
                x0 + t * (xf - x0)
            };
            if self.eval(x).is_err() {
                bad = Some(match bad {
                    None => (x, x, 1),
                    Some((first, _, count)) => (first, x, count + 1),
                });
            }
        }
        match bad {
            None => Ok(()),
            Some((first, last, count)) => Err(FormulaError::UndefinedInRange {
                x0,
                xf,
                first,
                last,
                count,
                samples,
            }),
        }
    }
}

/// A token of the checker: its kind, 1-based column and text.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Kind {
    Number,
    Variable,
    Constant,
    Function,
    Op(char),
    Open,
    Close,
}

#[derive(Debug, Clone, Copy)]
struct Token<'a> {
    kind: Kind,
    column: usize,
    text: &'a str,
}

/// Splits `text` into tokens, refusing unknown characters and names.
fn tokens(text: &str) -> Result<Vec<Token<'_>>, FormulaError> {
    let mut out = Vec::new();
    let mut i = 0;
    while let Some(c) = text[i..].chars().next() {
        let rest = &text[i..];
        let column = text[..i].chars().count() + 1;
        if c.is_whitespace() {
            i += c.len_utf8();
            continue;
        }
        let (kind, len) = if c.is_ascii_digit() || c == '.' {
            match number_len(rest) {
                0 => return Err(FormulaError::UnexpectedCharacter { column, found: c }),
                n => (Kind::Number, n),
            }
        } else if c.is_ascii_alphabetic() || c == '_' {
            let n = rest
                .bytes()
                .take_while(|b| b.is_ascii_alphanumeric() || *b == b'_')
                .count();
            let name = &rest[..n];
            let kind = if name == VARIABLE {
                Kind::Variable
            } else if CONSTANTS.contains(&name) {
                Kind::Constant
            } else if FUNCTIONS.contains(&name) {
                Kind::Function
            } else if name == "log" {
                return Err(FormulaError::AmbiguousLog { column });
            } else if rest[n..].trim_start().starts_with('(') {
                return Err(FormulaError::UnknownFunction {
                    column,
                    name: name.to_string(),
                });
            } else {
                return Err(FormulaError::UnknownName {
                    column,
                    name: name.to_string(),
                });
            };
            (kind, n)
        } else {
            let kind = match c {
                '+' | '-' | '*' | '/' | '^' => Kind::Op(c),
                '(' => Kind::Open,
                ')' => Kind::Close,
                _ => return Err(FormulaError::UnexpectedCharacter { column, found: c }),
            };
            (kind, c.len_utf8())
        };
        out.push(Token {
            kind,
            column,
            text: &rest[..len],
        });
        i += len;
    }
    Ok(out)
}

/// Checks the token sequence against the documented syntax; returns whether `x` occurs.
fn check(text: &str) -> Result<bool, FormulaError> {
    let toks = tokens(text)?;
    if toks.is_empty() {
        return Err(FormulaError::Empty);
    }
    let end_column = text.chars().count() + 1;
    // Columns of the open parentheses.
    let mut open: Vec<usize> = Vec::new();
    // Unary signs waiting for their operand: (depth, column).
    let mut signs: Vec<(usize, usize)> = Vec::new();
    // Per depth: column of a `^` whose exponent is still the last operand at that depth.
    let mut power: Vec<Option<usize>> = vec![None];
    let mut expect_value = true;
    let mut uses_x = false;
    for (k, t) in toks.iter().enumerate() {
        let next = toks.get(k + 1);
        if expect_value {
            match t.kind {
                Kind::Number | Kind::Variable | Kind::Constant => {
                    uses_x |= t.kind == Kind::Variable;
                    operand_done(open.len(), &mut signs, next)?;
                    expect_value = false;
                }
                Kind::Function => {
                    if !matches!(next, Some(n) if n.kind == Kind::Open) {
                        return Err(FormulaError::MissingArgument {
                            column: t.column,
                            name: t.text.to_string(),
                        });
                    }
                }
                Kind::Open => {
                    open.push(t.column);
                    power.push(None);
                }
                Kind::Op('+') | Kind::Op('-') => signs.push((open.len(), t.column)),
                Kind::Op(_) | Kind::Close => {
                    return Err(FormulaError::MissingValue {
                        column: t.column,
                        found: t.text.to_string(),
                    })
                }
            }
        } else {
            match t.kind {
                Kind::Op(op) => {
                    let depth = open.len();
                    if op == '^' {
                        if power[depth].is_some() {
                            return Err(FormulaError::ChainedPower { column: t.column });
                        }
                        power[depth] = Some(t.column);
                    } else {
                        power[depth] = None;
                    }
                    expect_value = true;
                }
                Kind::Close => {
                    if open.pop().is_none() {
                        return Err(FormulaError::UnmatchedParenthesis { column: t.column });
                    }
                    power.pop();
                    operand_done(open.len(), &mut signs, next)?;
                }
                Kind::Number | Kind::Variable | Kind::Constant | Kind::Function | Kind::Open => {
                    return Err(FormulaError::MissingOperator {
                        column: t.column,
                        found: t.text.to_string(),
                    })
                }
            }
        }
    }
    if expect_value {
        return Err(FormulaError::MissingValue {
            column: end_column,
            found: "end of formula".to_string(),
        });
    }
    if let Some(&column) = open.last() {
        return Err(FormulaError::UnclosedParenthesis { column });
    }
    Ok(uses_x)
}

/// An operand at `depth` is complete: the signs waiting at that depth apply to it, which is
/// ambiguous when a `^` follows.
fn operand_done(
    depth: usize,
    signs: &mut Vec<(usize, usize)>,
    next: Option<&Token<'_>>,
) -> Result<(), FormulaError> {
    let power_follows = matches!(next, Some(n) if n.kind == Kind::Op('^'));
    if let Some(&(_, column)) = signs.iter().find(|(d, _)| *d == depth) {
        if power_follows {
            return Err(FormulaError::AmbiguousSign { column });
        }
    }
    signs.retain(|(d, _)| *d != depth);
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn val(text: &str, x: f64) -> f64 {
        Formula::parse(text)
            .unwrap_or_else(|e| panic!("{text}: {e}"))
            .eval(x)
            .unwrap_or_else(|e| panic!("{text}: {e}"))
    }

    // Reference values: elementary identities (log10(100) = 2, ln(e) = 1, 2^3 = 8,
    // sqrt(2)^2 = 2, sin(pi/2) = 1), and Rust's standard library for the general checks.
    #[test]
    fn elementary_values() {
        assert_relative_eq!(val("log10(100)", 0.0), 2.0, max_relative = 1e-15);
        assert_relative_eq!(val("ln(e)", 0.0), 1.0, max_relative = 1e-15);
        assert_relative_eq!(val("2^3", 0.0), 8.0, max_relative = 1e-15);
        assert_relative_eq!(val("sqrt(2)^2", 0.0), 2.0, max_relative = 1e-15);
        assert_relative_eq!(val("sin(pi/2)", 0.0), 1.0, max_relative = 1e-15);
        assert_relative_eq!(val("log2(8)", 0.0), 3.0, max_relative = 1e-15);
        assert_relative_eq!(
            val("exp(1)", 0.0),
            std::f64::consts::E,
            max_relative = 1e-15
        );
    }

    #[test]
    fn precedence_and_literals() {
        let x = 1.7f64;
        assert_relative_eq!(val("1 + 2*x^2", x), 1.0 + 2.0 * x * x, max_relative = 1e-14);
        assert_relative_eq!(val("6/2*3", x), 9.0, max_relative = 1e-15);
        assert_relative_eq!(val("1-2-3", x), -4.0, max_relative = 1e-15);
        assert_relative_eq!(val("1-2+3", x), 2.0, max_relative = 1e-15);
        assert_relative_eq!(val("8/2/2", x), 2.0, max_relative = 1e-15);
        assert_relative_eq!(val("2 - 3^2", x), -7.0, max_relative = 1e-15);
        assert_relative_eq!(val("2^-1", x), 0.5, max_relative = 1e-15);
        assert_relative_eq!(val("-(x^2)", x), -x * x, max_relative = 1e-15);
        assert_relative_eq!(val("(-x)^2", x), x * x, max_relative = 1e-15);
        assert_relative_eq!(val("exp(-(x^2))", x), (-x * x).exp(), max_relative = 1e-15);
        assert_relative_eq!(val("-x + 1", x), 1.0 - x, max_relative = 1e-15);
        assert_relative_eq!(val("1e-3*x", x), 1e-3 * x, max_relative = 1e-15);
        assert_relative_eq!(val("2.5E+2", x), 250.0, max_relative = 1e-15);
        assert_relative_eq!(val(".5*x", x), 0.5 * x, max_relative = 1e-15);
        assert_relative_eq!(val("x*e", x), x * std::f64::consts::E, max_relative = 1e-15);
        assert_relative_eq!(val("e^x", x), x.exp(), max_relative = 1e-14);
        assert_relative_eq!(val("sin(x)^2 + cos(x)^2", x), 1.0, max_relative = 1e-15);
        assert_relative_eq!(
            val("x^1.5 * atan(x) / (1 + abs(-x))", x),
            x.powf(1.5) * x.atan() / (1.0 + x),
            max_relative = 1e-14
        );
        assert_relative_eq!(val("3", x), 3.0, max_relative = 1e-15);
        assert!(!Formula::parse("3 + pi").unwrap().uses_x());
    }

    fn err(text: &str) -> FormulaError {
        match Formula::parse(text) {
            Ok(_) => panic!("{text} parsed"),
            Err(e) => e,
        }
    }

    #[test]
    fn errors_name_column_and_token() {
        assert_eq!(
            err("sin(x) + foo(x)"),
            FormulaError::UnknownFunction {
                column: 10,
                name: "foo".into()
            }
        );
        assert_eq!(
            err("x + y"),
            FormulaError::UnknownName {
                column: 5,
                name: "y".into()
            }
        );
        assert_eq!(err("log(x)"), FormulaError::AmbiguousLog { column: 1 });
        assert_eq!(
            err("sin x"),
            FormulaError::MissingArgument {
                column: 1,
                name: "sin".into()
            }
        );
        assert_eq!(
            err("(x + 1"),
            FormulaError::UnclosedParenthesis { column: 1 }
        );
        assert_eq!(
            err("x + 1)"),
            FormulaError::UnmatchedParenthesis { column: 6 }
        );
        assert_eq!(
            err("2x"),
            FormulaError::MissingOperator {
                column: 2,
                found: "x".into()
            }
        );
        assert_eq!(
            err("x */ 2"),
            FormulaError::MissingValue {
                column: 4,
                found: "/".into()
            }
        );
        assert_eq!(
            err("x +"),
            FormulaError::MissingValue {
                column: 4,
                found: "end of formula".into()
            }
        );
        assert_eq!(
            err("()"),
            FormulaError::MissingValue {
                column: 2,
                found: ")".into()
            }
        );
        assert_eq!(err("-x^2"), FormulaError::AmbiguousSign { column: 1 });
        assert_eq!(
            err("1 + 2*-sin(x)^2"),
            FormulaError::AmbiguousSign { column: 7 }
        );
        assert_eq!(err("2^3^2"), FormulaError::ChainedPower { column: 4 });
        assert_eq!(err("2^-3^2"), FormulaError::AmbiguousSign { column: 3 });
        assert_eq!(
            err("x % 2"),
            FormulaError::UnexpectedCharacter {
                column: 3,
                found: '%'
            }
        );
        assert_eq!(
            err("π*x"),
            FormulaError::UnexpectedCharacter {
                column: 1,
                found: 'π'
            }
        );
        assert_eq!(err("   "), FormulaError::Empty);
        // The message names what the user needs.
        let msg = err("sin(x) + foo(x)").to_string();
        assert!(msg.contains("foo") && msg.contains("column 10"), "{msg}");
    }

    // The synthesis engine evaluates formulas from worker threads.
    #[test]
    fn formula_is_shareable_between_threads() {
        fn shareable<T: Send + Sync + 'static>() {}
        shareable::<Formula>();
        shareable::<FormulaError>();
        let f = Formula::parse("x^2").unwrap();
        let y = std::thread::scope(|s| s.spawn(|| f.eval(3.0)).join().unwrap()).unwrap();
        assert_relative_eq!(y, 9.0, max_relative = 1e-15);
    }

    #[test]
    fn undefined_values_are_errors() {
        let f = Formula::parse("ln(x)").unwrap();
        assert!(matches!(f.eval(0.0), Err(FormulaError::Undefined { .. })));
        assert!(matches!(f.eval(-1.0), Err(FormulaError::Undefined { .. })));
        assert!(matches!(
            f.eval(f64::NAN),
            Err(FormulaError::BadArgument { .. })
        ));
        let g = Formula::parse("1/(x - 1)").unwrap();
        assert!(matches!(g.eval(1.0), Err(FormulaError::Undefined { .. })));
    }

    #[test]
    fn check_range_says_where() {
        let f = Formula::parse("sqrt(x)").unwrap();
        assert!(f.check_range(0.0, 4.0, 9).is_ok());
        // Samples -2, -1.5, ..., 2: the four negative ones fail.
        match f.check_range(-2.0, 2.0, 9) {
            Err(FormulaError::UndefinedInRange {
                first, last, count, ..
            }) => {
                assert_relative_eq!(first, -2.0, max_relative = 1e-15);
                assert_relative_eq!(last, -0.5, max_relative = 1e-15);
                assert_eq!(count, 4);
            }
            other => panic!("{other:?}"),
        }
        assert!(matches!(
            f.check_range(0.0, 1.0, 1),
            Err(FormulaError::BadRange { .. })
        ));
    }
}
