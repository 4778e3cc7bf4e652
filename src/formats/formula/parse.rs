//! The lexer and the recursive-descent parser of the formula language, with the nesting and
//! tree-depth limits (checked iteratively, so no input can overflow the stack).

use super::{BinaryOp, Expr, FormulaError, Function, Value, MAX_NESTING, MAX_TREE_DEPTH};

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
