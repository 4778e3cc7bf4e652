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

use std::fmt;
use std::rc::Rc;

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

// ---------------------------------------------------------------------------------------------
// Lexer

#[derive(Debug, Clone, PartialEq)]
enum Token {
    Int(i64),
    Real(f64),
    Ident(String),
    Op(&'static str),
    LParen,
    RParen,
    LBracket,
    RBracket,
    Comma,
    End,
}

fn lex(src: &str) -> Result<Vec<(Token, usize)>, FormulaError> {
    let chars: Vec<char> = src.chars().collect();
    let mut tokens = Vec::new();
    let mut i = 0;
    while i < chars.len() {
        let c = chars[i];
        if c.is_whitespace() {
            i += 1;
            continue;
        }
        let start = i;
        if c.is_ascii_digit() || (c == '.' && chars.get(i + 1).is_some_and(|d| d.is_ascii_digit()))
        {
            while i < chars.len() && (chars[i].is_ascii_digit() || chars[i] == '_') {
                i += 1;
            }
            let mut real = false;
            if i < chars.len() && chars[i] == '.' {
                real = true;
                i += 1;
                while i < chars.len() && chars[i].is_ascii_digit() {
                    i += 1;
                }
            }
            if i < chars.len() && (chars[i] == 'e' || chars[i] == 'E') {
                let mut j = i + 1;
                if j < chars.len() && (chars[j] == '+' || chars[j] == '-') {
                    j += 1;
                }
                if j < chars.len() && chars[j].is_ascii_digit() {
                    real = true;
                    i = j;
                    while i < chars.len() && chars[i].is_ascii_digit() {
                        i += 1;
                    }
                }
            }
            let text: String = chars[start..i].iter().filter(|c| **c != '_').collect();
            let token = if real {
                Token::Real(
                    text.parse::<f64>()
                        .ok()
                        .filter(|v| v.is_finite())
                        .ok_or_else(|| FormulaError {
                            pos: start,
                            message: format!("`{text}` is not a finite number"),
                        })?,
                )
            } else {
                Token::Int(text.parse().map_err(|_| FormulaError {
                    pos: start,
                    message: format!("integer `{text}` is too large"),
                })?)
            };
            tokens.push((token, start));
            continue;
        }
        if c.is_alphabetic() || c == '_' {
            while i < chars.len() && (chars[i].is_alphanumeric() || chars[i] == '_') {
                i += 1;
            }
            tokens.push((Token::Ident(chars[start..i].iter().collect()), start));
            continue;
        }
        let next = chars.get(i + 1).copied();
        let (token, len) = match (c, next) {
            ('(', _) => (Token::LParen, 1),
            (')', _) => (Token::RParen, 1),
            ('[', _) => (Token::LBracket, 1),
            (']', _) => (Token::RBracket, 1),
            (',', _) => (Token::Comma, 1),
            ('*', Some('*')) => (Token::Op("**"), 2),
            ('/', Some('/')) => (Token::Op("//"), 2),
            ('=', Some('=')) => (Token::Op("=="), 2),
            ('!', Some('=')) => (Token::Op("!="), 2),
            ('<', Some('=')) => (Token::Op("<="), 2),
            ('>', Some('=')) => (Token::Op(">="), 2),
            ('+', _) => (Token::Op("+"), 1),
            ('-', _) => (Token::Op("-"), 1),
            ('*', _) => (Token::Op("*"), 1),
            ('/', _) => (Token::Op("/"), 1),
            ('%', _) => (Token::Op("%"), 1),
            ('<', _) => (Token::Op("<"), 1),
            ('>', _) => (Token::Op(">"), 1),
            ('=', _) => {
                return Err(FormulaError {
                    pos: i,
                    message: "`=` is not an operator; write `==` to compare".into(),
                })
            }
            ('^', _) => {
                return Err(FormulaError {
                    pos: i,
                    message: "`^` is ambiguous; write `xor` for exclusive or, `**` for a power"
                        .into(),
                })
            }
            ('&' | '|' | '!', _) => {
                return Err(FormulaError {
                    pos: i,
                    message: format!("`{c}` is not an operator; write `and`, `or`, `not`"),
                })
            }
            _ => {
                return Err(FormulaError {
                    pos: i,
                    message: format!("unexpected character `{c}`"),
                })
            }
        };
        tokens.push((token, start));
        i += len;
    }
    tokens.push((Token::End, chars.len()));
    Ok(tokens)
}

// ---------------------------------------------------------------------------------------------
// Parser (recursive descent, one function per grammar level)

struct Parser {
    tokens: Vec<(Token, usize)>,
    at: usize,
    /// Current nesting of recursive rules (parentheses, `if`, unary `-`, `not`, calls, indices).
    nesting: usize,
}

/// Deepest nesting the parser follows, and deepest tree it accepts (a long chain such as a
/// flat sum of many terms makes a deep tree without nesting). Beyond these a formula is
/// refused with a clear error instead of overflowing the stack.
pub const MAX_NESTING: usize = 200;
/// See [`MAX_NESTING`].
pub const MAX_TREE_DEPTH: usize = 2000;

impl Parser {
    fn peek(&self) -> &Token {
        &self.tokens[self.at].0
    }
    fn pos(&self) -> usize {
        self.tokens[self.at].1
    }
    fn bump(&mut self) -> Token {
        let t = self.tokens[self.at].0.clone();
        if self.at + 1 < self.tokens.len() {
            self.at += 1;
        }
        t
    }
    fn is_keyword(&self, kw: &str) -> bool {
        matches!(self.peek(), Token::Ident(s) if s == kw)
    }
    fn is_op(&self, op: &str) -> bool {
        matches!(self.peek(), Token::Op(s) if *s == op)
    }
    fn error<T>(&self, message: impl Into<String>) -> Result<T, FormulaError> {
        Err(FormulaError {
            pos: self.pos(),
            message: message.into(),
        })
    }
    fn expect_keyword(&mut self, kw: &str) -> Result<(), FormulaError> {
        if self.is_keyword(kw) {
            self.bump();
            Ok(())
        } else {
            self.error(format!("expected `{kw}`, found {}", describe(self.peek())))
        }
    }

    /// Runs a recursive rule one nesting level deeper, refusing beyond [`MAX_NESTING`].
    fn nested(
        &mut self,
        rule: fn(&mut Self) -> Result<Expr, FormulaError>,
    ) -> Result<Expr, FormulaError> {
        if self.nesting >= MAX_NESTING {
            return self.error(format!(
                "the formula nests more than {MAX_NESTING} levels deep"
            ));
        }
        self.nesting += 1;
        let e = rule(self);
        self.nesting -= 1;
        e
    }

    fn expr(&mut self) -> Result<Expr, FormulaError> {
        self.nested(Self::expr_inner)
    }

    fn expr_inner(&mut self) -> Result<Expr, FormulaError> {
        if self.is_keyword("if") {
            self.bump();
            let cond = self.expr()?;
            self.expect_keyword("then")?;
            let then = self.expr()?;
            self.expect_keyword("else")?;
            let otherwise = self.expr()?;
            return Ok(Expr::If {
                cond: Box::new(cond),
                then: Box::new(then),
                otherwise: Box::new(otherwise),
            });
        }
        self.or()
    }

    fn keyword_chain(
        &mut self,
        kw: &str,
        op: BinaryOp,
        next: fn(&mut Self) -> Result<Expr, FormulaError>,
    ) -> Result<Expr, FormulaError> {
        let mut lhs = next(self)?;
        while self.is_keyword(kw) {
            let pos = self.pos();
            self.bump();
            let rhs = next(self)?;
            lhs = Expr::Binary {
                op,
                lhs: Box::new(lhs),
                rhs: Box::new(rhs),
                pos,
            };
        }
        Ok(lhs)
    }

    fn or(&mut self) -> Result<Expr, FormulaError> {
        self.keyword_chain("or", BinaryOp::Or, Self::xor)
    }
    fn xor(&mut self) -> Result<Expr, FormulaError> {
        self.keyword_chain("xor", BinaryOp::Xor, Self::and)
    }
    fn and(&mut self) -> Result<Expr, FormulaError> {
        self.keyword_chain("and", BinaryOp::And, Self::not)
    }
    fn not(&mut self) -> Result<Expr, FormulaError> {
        if self.is_keyword("not") {
            self.bump();
            return Ok(Expr::Not(Box::new(self.nested(Self::not)?)));
        }
        self.compare()
    }

    fn compare(&mut self) -> Result<Expr, FormulaError> {
        let lhs = self.sum()?;
        let op = match self.peek() {
            Token::Op("==") => BinaryOp::Eq,
            Token::Op("!=") => BinaryOp::Ne,
            Token::Op("<") => BinaryOp::Lt,
            Token::Op("<=") => BinaryOp::Le,
            Token::Op(">") => BinaryOp::Gt,
            Token::Op(">=") => BinaryOp::Ge,
            _ => return Ok(lhs),
        };
        let pos = self.pos();
        self.bump();
        let rhs = self.sum()?;
        if matches!(
            self.peek(),
            Token::Op("==" | "!=" | "<" | "<=" | ">" | ">=")
        ) {
            return self.error("comparisons cannot be chained; join them with `and`");
        }
        Ok(Expr::Binary {
            op,
            lhs: Box::new(lhs),
            rhs: Box::new(rhs),
            pos,
        })
    }

    fn sum(&mut self) -> Result<Expr, FormulaError> {
        let mut lhs = self.product()?;
        loop {
            let op = match self.peek() {
                Token::Op("+") => BinaryOp::Add,
                Token::Op("-") => BinaryOp::Sub,
                _ => return Ok(lhs),
            };
            let pos = self.pos();
            self.bump();
            let rhs = self.product()?;
            lhs = Expr::Binary {
                op,
                lhs: Box::new(lhs),
                rhs: Box::new(rhs),
                pos,
            };
        }
    }

    fn product(&mut self) -> Result<Expr, FormulaError> {
        let mut lhs = self.unary()?;
        loop {
            let op = match self.peek() {
                Token::Op("*") => BinaryOp::Mul,
                Token::Op("/") => BinaryOp::Div,
                Token::Op("//") => BinaryOp::FloorDiv,
                Token::Op("%") => BinaryOp::Mod,
                _ => return Ok(lhs),
            };
            let pos = self.pos();
            self.bump();
            let rhs = self.unary()?;
            lhs = Expr::Binary {
                op,
                lhs: Box::new(lhs),
                rhs: Box::new(rhs),
                pos,
            };
        }
    }

    fn unary(&mut self) -> Result<Expr, FormulaError> {
        if self.is_op("-") {
            self.bump();
            return Ok(Expr::Neg(Box::new(self.nested(Self::unary)?)));
        }
        if self.is_op("+") {
            self.bump();
            return self.nested(Self::unary);
        }
        self.power()
    }

    fn power(&mut self) -> Result<Expr, FormulaError> {
        let base = self.postfix()?;
        if self.is_op("**") {
            let pos = self.pos();
            self.bump();
            let exponent = self.unary()?;
            return Ok(Expr::Binary {
                op: BinaryOp::Pow,
                lhs: Box::new(base),
                rhs: Box::new(exponent),
                pos,
            });
        }
        Ok(base)
    }

    fn postfix(&mut self) -> Result<Expr, FormulaError> {
        let mut e = self.atom()?;
        while matches!(self.peek(), Token::LBracket) {
            let pos = self.pos();
            self.bump();
            let index = self.expr()?;
            if !matches!(self.peek(), Token::RBracket) {
                return self.error(format!("expected `]`, found {}", describe(self.peek())));
            }
            self.bump();
            e = Expr::Index {
                table: Box::new(e),
                index: Box::new(index),
                pos,
            };
        }
        Ok(e)
    }

    fn atom(&mut self) -> Result<Expr, FormulaError> {
        let pos = self.pos();
        match self.bump() {
            Token::Int(i) => Ok(Expr::Literal(Value::Int(i))),
            Token::Real(r) => Ok(Expr::Literal(Value::Real(r))),
            Token::LParen => {
                let e = self.expr()?;
                if !matches!(self.peek(), Token::RParen) {
                    return self.error(format!("expected `)`, found {}", describe(self.peek())));
                }
                self.bump();
                Ok(e)
            }
            Token::Ident(name) => match name.as_str() {
                "true" => Ok(Expr::Literal(Value::Bool(true))),
                "false" => Ok(Expr::Literal(Value::Bool(false))),
                "pi" => Ok(Expr::Literal(Value::Real(std::f64::consts::PI))),
                "if" => {
                    // `if` in operand position, e.g. `1 + if x then 2 else 3`.
                    self.at -= 1;
                    self.expr()
                }
                "and" | "or" | "xor" | "not" | "then" | "else" => Err(FormulaError {
                    pos,
                    message: format!("expected a value, found keyword `{name}`"),
                }),
                _ if matches!(self.peek(), Token::LParen) => {
                    let Some(func) = Function::from_name(&name) else {
                        return Err(FormulaError {
                            pos,
                            message: format!(
                                "unknown function `{name}` (available: min, max, abs, sqrt, sin, cos)"
                            ),
                        });
                    };
                    self.bump();
                    let mut args = vec![self.expr()?];
                    while matches!(self.peek(), Token::Comma) {
                        self.bump();
                        args.push(self.expr()?);
                    }
                    if !matches!(self.peek(), Token::RParen) {
                        return self.error(format!(
                            "expected `)` or `,`, found {}",
                            describe(self.peek())
                        ));
                    }
                    self.bump();
                    let arity_ok = match func {
                        Function::Min | Function::Max => !args.is_empty(),
                        _ => args.len() == 1,
                    };
                    if !arity_ok {
                        return Err(FormulaError {
                            pos,
                            message: format!("`{name}` takes one argument"),
                        });
                    }
                    Ok(Expr::Call { func, args, pos })
                }
                _ => Ok(Expr::Name { name, pos }),
            },
            other => Err(FormulaError {
                pos,
                message: format!("expected a value, found {}", describe(&other)),
            }),
        }
    }
}

fn describe(t: &Token) -> String {
    match t {
        Token::Int(i) => format!("number `{i}`"),
        Token::Real(r) => format!("number `{r}`"),
        Token::Ident(s) => format!("`{s}`"),
        Token::Op(s) => format!("`{s}`"),
        Token::LParen => "`(`".into(),
        Token::RParen => "`)`".into(),
        Token::LBracket => "`[`".into(),
        Token::RBracket => "`]`".into(),
        Token::Comma => "`,`".into(),
        Token::End => "the end of the formula".into(),
    }
}

/// Depth of a tree, computed without recursion (the tree may be too deep to recurse over).
fn tree_depth(root: &Expr) -> usize {
    let mut deepest = 0;
    let mut stack = vec![(root, 1usize)];
    while let Some((e, d)) = stack.pop() {
        deepest = deepest.max(d);
        match e {
            Expr::Literal(_) | Expr::Slot(_) | Expr::Name { .. } => {}
            Expr::Neg(x) | Expr::Not(x) => stack.push((x, d + 1)),
            Expr::Binary { lhs, rhs, .. } => {
                stack.push((lhs, d + 1));
                stack.push((rhs, d + 1));
            }
            Expr::If {
                cond,
                then,
                otherwise,
            } => {
                stack.push((cond, d + 1));
                stack.push((then, d + 1));
                stack.push((otherwise, d + 1));
            }
            Expr::Call { args, .. } => stack.extend(args.iter().map(|a| (a, d + 1))),
            Expr::Index { table, index, .. } => {
                stack.push((table, d + 1));
                stack.push((index, d + 1));
            }
        }
    }
    deepest
}

/// Parses a formula into an unbound tree.
pub fn parse(src: &str) -> Result<Expr, FormulaError> {
    let tokens = lex(src)?;
    let mut p = Parser {
        tokens,
        at: 0,
        nesting: 0,
    };
    if matches!(p.peek(), Token::End) {
        return p.error("the formula is empty");
    }
    let e = p.expr()?;
    if !matches!(p.peek(), Token::End) {
        return p.error(format!(
            "unexpected {} after a complete formula",
            describe(p.peek())
        ));
    }
    let depth = tree_depth(&e);
    if depth > MAX_TREE_DEPTH {
        // Dropping a tree this deep would itself recurse too far: it is leaked instead (once,
        // on an error path, bounded by the input's size).
        std::mem::forget(e);
        return Err(FormulaError {
            pos: 0,
            message: format!(
                "the formula is {depth} operations deep (limit {MAX_TREE_DEPTH}); split a long sum into constants or use a `bell` table"
            ),
        });
    }
    Ok(e)
}

/// Names visible to a formula: player variables (bound to slots) and constants.
pub trait Scope {
    /// The slot of a player variable, if `name` is one.
    fn slot(&self, name: &str) -> Option<usize>;
    /// The value of a constant, if `name` is one.
    fn constant(&self, name: &str) -> Option<Value>;
    /// All names, for the "unknown name" message.
    fn names(&self) -> Vec<String>;
}

impl Expr {
    /// Resolves every name to a slot or a constant; unknown names are errors at their position.
    pub fn bind(&self, scope: &dyn Scope) -> Result<Expr, FormulaError> {
        let b = |e: &Expr| e.bind(scope).map(Box::new);
        Ok(match self {
            Expr::Literal(v) => Expr::Literal(v.clone()),
            Expr::Slot(s) => Expr::Slot(*s),
            Expr::Name { name, pos } => {
                if let Some(slot) = scope.slot(name) {
                    Expr::Slot(slot)
                } else if let Some(v) = scope.constant(name) {
                    Expr::Literal(v)
                } else {
                    let mut known = scope.names();
                    known.sort();
                    return Err(FormulaError {
                        pos: *pos,
                        message: if known.is_empty() {
                            format!("unknown name `{name}` (no variables are defined here)")
                        } else {
                            format!("unknown name `{name}` (known: {})", known.join(", "))
                        },
                    });
                }
            }
            Expr::Neg(e) => Expr::Neg(b(e)?),
            Expr::Not(e) => Expr::Not(b(e)?),
            Expr::Binary { op, lhs, rhs, pos } => Expr::Binary {
                op: *op,
                lhs: b(lhs)?,
                rhs: b(rhs)?,
                pos: *pos,
            },
            Expr::If {
                cond,
                then,
                otherwise,
            } => Expr::If {
                cond: b(cond)?,
                then: b(then)?,
                otherwise: b(otherwise)?,
            },
            Expr::Call { func, args, pos } => Expr::Call {
                func: *func,
                args: args
                    .iter()
                    .map(|a| a.bind(scope))
                    .collect::<Result<_, _>>()?,
                pos: *pos,
            },
            Expr::Index { table, index, pos } => Expr::Index {
                table: b(table)?,
                index: b(index)?,
                pos: *pos,
            },
        })
    }

    /// Evaluates a bound tree with the given slot values (the players' current labels).
    pub fn eval(&self, slots: &[i64]) -> Result<Value, FormulaError> {
        match self {
            Expr::Literal(v) => Ok(v.clone()),
            Expr::Slot(s) => Ok(Value::Int(slots[*s])),
            Expr::Name { name, pos } => Err(FormulaError {
                pos: *pos,
                message: format!("internal: unresolved name `{name}`"),
            }),
            Expr::Neg(e) => match e.eval(slots)? {
                Value::Int(i) => i.checked_neg().map(Value::Int).ok_or_else(|| overflow(0)),
                Value::Bool(b) => Ok(Value::Int(-(b as i64))),
                Value::Real(r) => Ok(Value::Real(-r)),
                Value::List(_) => Err(FormulaError {
                    pos: 0,
                    message: "cannot negate a table".into(),
                }),
            },
            Expr::Not(e) => Ok(Value::Bool(!e.eval(slots)?.truthy().map_err(at(0))?)),
            Expr::If {
                cond,
                then,
                otherwise,
            } => {
                if cond.eval(slots)?.truthy().map_err(at(0))? {
                    then.eval(slots)
                } else {
                    otherwise.eval(slots)
                }
            }
            Expr::Binary { op, lhs, rhs, pos } => {
                // Short-circuit the logical operators so a guard can protect a division.
                match op {
                    BinaryOp::And => {
                        let l = lhs.eval(slots)?.truthy().map_err(at(*pos))?;
                        return Ok(Value::Bool(
                            l && rhs.eval(slots)?.truthy().map_err(at(*pos))?,
                        ));
                    }
                    BinaryOp::Or => {
                        let l = lhs.eval(slots)?.truthy().map_err(at(*pos))?;
                        return Ok(Value::Bool(
                            l || rhs.eval(slots)?.truthy().map_err(at(*pos))?,
                        ));
                    }
                    _ => {}
                }
                let l = lhs.eval(slots)?;
                let r = rhs.eval(slots)?;
                binary(*op, &l, &r).map_err(at(*pos))
            }
            Expr::Call { func, args, pos } => {
                let values = args
                    .iter()
                    .map(|a| a.eval(slots))
                    .collect::<Result<Vec<_>, _>>()?;
                call(*func, &values).map_err(at(*pos))
            }
            Expr::Index { table, index, pos } => {
                let t = table.eval(slots)?;
                let i = index.eval(slots)?;
                let Value::List(items) = t else {
                    return Err(FormulaError {
                        pos: *pos,
                        message: format!("cannot index a {}", t.type_name()),
                    });
                };
                let Some(k) = i.as_int() else {
                    return Err(FormulaError {
                        pos: *pos,
                        message: format!("a table index must be an integer, got {i}"),
                    });
                };
                if k < 0 || k as usize >= items.len() {
                    return Err(FormulaError {
                        pos: *pos,
                        message: format!(
                            "index {k} is out of range for a table of {} entries",
                            items.len()
                        ),
                    });
                }
                Ok(items[k as usize].clone())
            }
        }
    }

    /// Whether the tree mentions any player variable (else it is a constant expression).
    pub fn uses_slots(&self) -> bool {
        match self {
            Expr::Slot(_) => true,
            Expr::Literal(_) | Expr::Name { .. } => false,
            Expr::Neg(e) | Expr::Not(e) => e.uses_slots(),
            Expr::Binary { lhs, rhs, .. } => lhs.uses_slots() || rhs.uses_slots(),
            Expr::If {
                cond,
                then,
                otherwise,
            } => cond.uses_slots() || then.uses_slots() || otherwise.uses_slots(),
            Expr::Call { args, .. } => args.iter().any(|a| a.uses_slots()),
            Expr::Index { table, index, .. } => table.uses_slots() || index.uses_slots(),
        }
    }
}

fn at(pos: usize) -> impl Fn(String) -> FormulaError {
    move |message| FormulaError { pos, message }
}

fn overflow(pos: usize) -> FormulaError {
    FormulaError {
        pos,
        message: "integer overflow".into(),
    }
}

fn binary(op: BinaryOp, l: &Value, r: &Value) -> Result<Value, String> {
    use BinaryOp::*;
    if matches!(op, Xor) {
        return Ok(Value::Bool(l.truthy()? != r.truthy()?));
    }
    if let (Some(a), Some(b)) = (l.as_int(), r.as_int()) {
        let ovf = || "integer overflow".to_string();
        return Ok(match op {
            Add => Value::Int(a.checked_add(b).ok_or_else(ovf)?),
            Sub => Value::Int(a.checked_sub(b).ok_or_else(ovf)?),
            Mul => Value::Int(a.checked_mul(b).ok_or_else(ovf)?),
            Div => {
                if b == 0 {
                    return Err("division by zero".into());
                }
                finite(a as f64 / b as f64)?
            }
            FloorDiv => {
                if b == 0 {
                    return Err("division by zero".into());
                }
                let q = a.checked_div(b).ok_or_else(ovf)?;
                Value::Int(if a % b != 0 && ((a < 0) != (b < 0)) {
                    q.checked_sub(1).ok_or_else(ovf)?
                } else {
                    q
                })
            }
            Mod => {
                if b == 0 {
                    return Err("modulo by zero".into());
                }
                Value::Int(floor_mod(a, b))
            }
            Pow => {
                if b >= 0 {
                    let e = u32::try_from(b).map_err(|_| ovf())?;
                    Value::Int(a.checked_pow(e).ok_or_else(ovf)?)
                } else {
                    // The full exponent (not truncated to 32 bits).
                    finite((a as f64).powf(b as f64))?
                }
            }
            Eq => Value::Bool(a == b),
            Ne => Value::Bool(a != b),
            Lt => Value::Bool(a < b),
            Le => Value::Bool(a <= b),
            Gt => Value::Bool(a > b),
            Ge => Value::Bool(a >= b),
            And | Or | Xor => unreachable!("handled before"),
        });
    }
    let a = l.as_f64()?;
    let b = r.as_f64()?;
    Ok(match op {
        Add => finite(a + b)?,
        Sub => finite(a - b)?,
        Mul => finite(a * b)?,
        Div => {
            if b == 0.0 {
                return Err("division by zero".into());
            }
            finite(a / b)?
        }
        FloorDiv => {
            if b == 0.0 {
                return Err("division by zero".into());
            }
            finite((a / b).floor())?
        }
        Mod => {
            if b == 0.0 {
                return Err("modulo by zero".into());
            }
            finite(a - b * (a / b).floor())?
        }
        Pow => finite(a.powf(b))?,
        Eq => Value::Bool(a == b),
        Ne => Value::Bool(a != b),
        Lt => Value::Bool(a < b),
        Le => Value::Bool(a <= b),
        Gt => Value::Bool(a > b),
        Ge => Value::Bool(a >= b),
        And | Or | Xor => unreachable!("handled before"),
    })
}

/// A real result, refused unless finite: NaN would slip through every comparison later and an
/// infinity would poison every sum.
fn finite(x: f64) -> Result<Value, String> {
    if x.is_finite() {
        Ok(Value::Real(x))
    } else {
        Err(format!("the result is not a finite number ({x})"))
    }
}

/// Modulo with the sign of the divisor (floor division convention).
fn floor_mod(a: i64, b: i64) -> i64 {
    // i64::MIN % -1 overflows in Rust; its true value is 0.
    let r = a.checked_rem(b).unwrap_or(0);
    if r != 0 && ((r < 0) != (b < 0)) {
        r + b
    } else {
        r
    }
}

fn call(func: Function, args: &[Value]) -> Result<Value, String> {
    let all_int = args.iter().all(|v| v.as_int().is_some());
    match func {
        Function::Min | Function::Max => {
            if all_int {
                let ints = args.iter().map(|v| v.as_int().unwrap_or(0));
                let r = if func == Function::Min {
                    ints.min()
                } else {
                    ints.max()
                };
                return Ok(Value::Int(r.unwrap_or(0)));
            }
            let mut acc = args[0].as_f64()?;
            for v in &args[1..] {
                let x = v.as_f64()?;
                if x.is_nan() || acc.is_nan() {
                    return Err("min/max of a value that is not a number".into());
                }
                acc = if func == Function::Min {
                    acc.min(x)
                } else {
                    acc.max(x)
                };
            }
            Ok(Value::Real(acc))
        }
        Function::Abs => match &args[0] {
            Value::Int(i) => Ok(Value::Int(i.checked_abs().ok_or("integer overflow")?)),
            v => Ok(Value::Real(v.as_f64()?.abs())),
        },
        Function::Sqrt => {
            let x = args[0].as_f64()?;
            if x < 0.0 {
                return Err(format!("sqrt of a negative number ({x})"));
            }
            Ok(Value::Real(x.sqrt()))
        }
        Function::Sin => finite(args[0].as_f64()?.sin()),
        Function::Cos => finite(args[0].as_f64()?.cos()),
    }
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
