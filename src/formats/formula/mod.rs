//! The formula language of game files: win predicates, score functions, question weights and
//! constant expressions.
//!
//! A formula is parsed once into a tree ([`Expr`]), its names are resolved against the players'
//! variables and the file's constants ([`Expr::bind`]), and the bound tree is then evaluated for
//! every joint question and answer while the flat game table is filled. No solver ever sees a
//! formula.
//!
//! Grammar, loosest binding first:
//!
//! ```text
//! expr    := "if" expr "then" expr "else" expr | or
//! or      := xor ("or" xor)*
//! xor     := and ("xor" and)*
//! and     := not ("and" not)*
//! not     := "not" not | compare
//! compare := sum (("==" | "!=" | "<" | "<=" | ">" | ">=") sum)?
//! sum     := product (("+" | "-") product)*
//! product := unary (("*" | "/" | "//" | "%") unary)*
//! unary   := ("-" | "+") unary | power
//! power   := postfix ("**" unary)?
//! postfix := atom ("[" expr "]")*
//! atom    := number | name | name "(" expr ("," expr)* ")" | "(" expr ")" | "true" | "false"
//! ```
//!
//! Values are integers, reals, booleans, and lists (constant tables). Booleans count as 0/1 in
//! arithmetic; in a condition any non-zero number counts as true. `/` is real division, `//` and `%`
//! floor towards minus infinity (so `-1 % 3 == 2`), `**` stays integral for integer operands with a
//! non-negative exponent.

mod eval;
mod parse;

use std::fmt;
use std::rc::Rc;

pub use parse::parse;

/// A runtime value.
#[derive(Debug, Clone, PartialEq)]
pub enum Value {
    /// An integer.
    Int(i64),
    /// A real number.
    Real(f64),
    /// A truth value.
    Bool(bool),
    /// A table (a list of values).
    List(Rc<Vec<Value>>),
}

impl Value {
    /// The value as a real number (an error for tables and truth values).
    pub fn as_f64(&self) -> Result<f64, String> {
        match self {
            Value::Int(i) => Ok(*i as f64),
            Value::Real(r) => Ok(*r),
            Value::Bool(b) => Ok(if *b { 1.0 } else { 0.0 }),
            Value::List(_) => Err("a table was used where a number is needed".into()),
        }
    }

    /// The value as a truth value (numbers: non-zero is true).
    pub fn truthy(&self) -> Result<bool, String> {
        match self {
            Value::Bool(b) => Ok(*b),
            Value::Int(i) => Ok(*i != 0),
            Value::Real(r) => Ok(*r != 0.0),
            Value::List(_) => Err("a table was used where a condition is needed".into()),
        }
    }

    fn as_int(&self) -> Option<i64> {
        match self {
            Value::Int(i) => Some(*i),
            Value::Bool(b) => Some(*b as i64),
            _ => None,
        }
    }

    fn type_name(&self) -> &'static str {
        match self {
            Value::Int(_) => "integer",
            Value::Real(_) => "real",
            Value::Bool(_) => "boolean",
            Value::List(_) => "table",
        }
    }
}

impl fmt::Display for Value {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Value::Int(i) => write!(f, "{i}"),
            Value::Real(r) => write!(f, "{r}"),
            Value::Bool(b) => write!(f, "{b}"),
            Value::List(items) => {
                write!(f, "[")?;
                for (i, v) in items.iter().enumerate() {
                    if i > 0 {
                        write!(f, ", ")?;
                    }
                    write!(f, "{v}")?;
                }
                write!(f, "]")
            }
        }
    }
}

/// A binary operator.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BinaryOp {
    /// `+`
    Add,
    /// `-`
    Sub,
    /// `*`
    Mul,
    /// `/` (real division)
    Div,
    /// `//` (integer division, rounding down)
    FloorDiv,
    /// `%` (remainder with the sign of the divisor)
    Mod,
    /// `**`
    Pow,
    /// `==`
    Eq,
    /// `!=`
    Ne,
    /// `<`
    Lt,
    /// `<=`
    Le,
    /// `>`
    Gt,
    /// `>=`
    Ge,
    /// `and`
    And,
    /// `or`
    Or,
    /// `xor`
    Xor,
}

/// A built-in function.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Function {
    /// `min(a, b, ...)`
    Min,
    /// `max(a, b, ...)`
    Max,
    /// `abs(x)`
    Abs,
    /// `sqrt(x)`
    Sqrt,
    /// `sin(x)`
    Sin,
    /// `cos(x)`
    Cos,
}

impl Function {
    fn from_name(name: &str) -> Option<Self> {
        Some(match name {
            "min" => Function::Min,
            "max" => Function::Max,
            "abs" => Function::Abs,
            "sqrt" => Function::Sqrt,
            "sin" => Function::Sin,
            "cos" => Function::Cos,
            _ => return None,
        })
    }
}

/// A parsed formula. `pos` fields are character offsets into the source, for error messages.
#[derive(Debug, Clone, PartialEq)]
pub enum Expr {
    /// A number, truth value or table written out.
    Literal(Value),
    /// A name not yet resolved (before [`Expr::bind`]).
    Name {
        /// The name.
        name: String,
        /// Where it starts.
        pos: usize,
    },
    /// A resolved player variable: index into the slot array given to [`Expr::eval`].
    Slot(usize),
    /// `-x`
    Neg(Box<Expr>),
    /// `not x`
    Not(Box<Expr>),
    /// `lhs op rhs`
    Binary {
        /// The operator.
        op: BinaryOp,
        /// Left operand.
        lhs: Box<Expr>,
        /// Right operand.
        rhs: Box<Expr>,
        /// Where the operator is.
        pos: usize,
    },
    /// `if cond then a else b`
    If {
        /// The condition.
        cond: Box<Expr>,
        /// Value when it holds.
        then: Box<Expr>,
        /// Value otherwise.
        otherwise: Box<Expr>,
    },
    /// A built-in function applied to arguments.
    Call {
        /// The function.
        func: Function,
        /// Its arguments.
        args: Vec<Expr>,
        /// Where the call is.
        pos: usize,
    },
    /// `table[index]`
    Index {
        /// The table.
        table: Box<Expr>,
        /// The index.
        index: Box<Expr>,
        /// Where the index is.
        pos: usize,
    },
}

/// An error with the character offset in the formula where it was detected.
#[derive(Debug, Clone, PartialEq)]
pub struct FormulaError {
    /// Character offset in the formula.
    pub pos: usize,
    /// What is wrong.
    pub message: String,
}

impl fmt::Display for FormulaError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{} (at character {})", self.message, self.pos + 1)
    }
}

/// Deepest nesting the parser follows, and deepest tree it accepts (a long chain such as a
/// flat sum of many terms makes a deep tree without nesting). Beyond these a formula is
/// refused with a clear error instead of overflowing the stack.
pub const MAX_NESTING: usize = 200;

/// See [`MAX_NESTING`].
pub const MAX_TREE_DEPTH: usize = 2000;

/// Names visible to a formula: player variables (bound to slots) and constants.
pub trait Scope {
    /// The slot of a player variable, if `name` is one.
    fn slot(&self, name: &str) -> Option<usize>;
    /// The value of a constant, if `name` is one.
    fn constant(&self, name: &str) -> Option<Value>;
    /// All names, for the "unknown name" message.
    fn names(&self) -> Vec<String>;
}

/// A scope with no player variables and a fixed list of constants; used for constant
/// expressions such as a probability written as `"1/3"`.
pub struct ConstantScope<'a> {
    /// `(name, value)` pairs.
    pub constants: &'a [(String, Value)],
}

/// The value of constant `name` in a list of `(name, value)` pairs.
pub fn constant_named(constants: &[(String, Value)], name: &str) -> Option<Value> {
    constants
        .iter()
        .find(|(n, _)| n == name)
        .map(|(_, v)| v.clone())
}

impl Scope for ConstantScope<'_> {
    fn slot(&self, _: &str) -> Option<usize> {
        None
    }
    fn constant(&self, name: &str) -> Option<Value> {
        constant_named(self.constants, name)
    }
    fn names(&self) -> Vec<String> {
        self.constants.iter().map(|(n, _)| n.clone()).collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn eval_const(src: &str) -> Result<Value, FormulaError> {
        parse(src)?
            .bind(&ConstantScope { constants: &[] })?
            .eval(&[])
    }

    #[test]
    fn arithmetic_follows_the_documented_rules() {
        assert_eq!(eval_const("1 + 2 * 3").unwrap(), Value::Int(7));
        assert_eq!(eval_const("7 / 2").unwrap(), Value::Real(3.5));
        assert_eq!(eval_const("7 // 2").unwrap(), Value::Int(3));
        assert_eq!(eval_const("-7 // 2").unwrap(), Value::Int(-4));
        assert_eq!(eval_const("-1 % 3").unwrap(), Value::Int(2));
        assert_eq!(eval_const("2 ** 10").unwrap(), Value::Int(1024));
        assert_eq!(eval_const("-2 ** 2").unwrap(), Value::Int(-4));
        assert_eq!(eval_const("2 ** -1").unwrap(), Value::Real(0.5));
        assert_eq!(eval_const("(1 == 1) + 1").unwrap(), Value::Int(2));
        assert_eq!(eval_const("1 xor 1").unwrap(), Value::Bool(false));
        assert_eq!(eval_const("not 0 and (2 > 1)").unwrap(), Value::Bool(true));
        assert_eq!(
            eval_const("if 3 > 2 then 10 else 20").unwrap(),
            Value::Int(10)
        );
        assert_eq!(
            eval_const("1 + if false then 1 else 2").unwrap(),
            Value::Int(3)
        );
        assert_eq!(eval_const("max(1, 2.5, -3)").unwrap(), Value::Real(2.5));
        assert_eq!(eval_const("min(4, 2, 3)").unwrap(), Value::Int(2));
        assert_eq!(eval_const("abs(-3)").unwrap(), Value::Int(3));
        assert_eq!(eval_const("5.5 % 2").unwrap(), Value::Real(1.5));
    }

    #[test]
    fn guards_short_circuit() {
        assert_eq!(
            eval_const("false and 1 / 0 > 1").unwrap(),
            Value::Bool(false)
        );
        assert_eq!(eval_const("true or 1 // 0 > 1").unwrap(), Value::Bool(true));
    }

    #[test]
    fn errors_point_at_the_offending_character() {
        let e = parse("a + = b").unwrap_err();
        assert_eq!(e.pos, 4);
        let e = parse("(a + b").unwrap_err();
        assert_eq!(e.pos, 6);
        assert!(e.message.contains("`)`"));
        let e = parse("a ^ b").unwrap_err();
        assert_eq!(e.pos, 2);
        let e = parse("1 < 2 < 3").unwrap_err();
        assert!(e.message.contains("chained"));
        let e = parse("x + y")
            .unwrap()
            .bind(&ConstantScope { constants: &[] });
        assert_eq!(e.unwrap_err().pos, 0);
        let e = eval_const("1 + 2 // 0").unwrap_err();
        assert_eq!(e.pos, 6);
        assert!(e.message.contains("division by zero"));
    }

    #[test]
    fn tables_are_indexed_by_integers() {
        let table = Value::List(Rc::new(vec![
            Value::List(Rc::new(vec![Value::Int(1), Value::Int(-1)])),
            Value::List(Rc::new(vec![Value::Int(2), Value::Int(3)])),
        ]));
        let constants = vec![("s".to_string(), table)];
        let scope = ConstantScope {
            constants: &constants,
        };
        let v = parse("s[1][0] * s[0][1]").unwrap().bind(&scope).unwrap();
        assert_eq!(v.eval(&[]).unwrap(), Value::Int(-2));
        let bad = parse("s[2][0]").unwrap().bind(&scope).unwrap();
        assert!(bad.eval(&[]).unwrap_err().message.contains("out of range"));
    }
}
