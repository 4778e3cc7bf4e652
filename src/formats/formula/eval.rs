//! Name binding and evaluation of formulas: integers with checked arithmetic, reals that must
//! stay finite, truth values and tables.

use super::{BinaryOp, Expr, FormulaError, Function, Scope, Value};

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
