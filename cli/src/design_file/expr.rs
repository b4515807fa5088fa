//! Arithmetic expressions of named parameters, as written in design files.
//!
//! Grammar (whitespace between tokens is free):
//! ```text
//! expr    = term (("+" | "-") term)*
//! term    = unary (("*" | "/") unary)*
//! unary   = ("-" | "+") unary | power
//! power   = primary (("^" | "**") unary)?        right-associative; -2^2 = -4
//! primary = number | name | name "(" expr ("," expr)* ")" | "(" expr ")"
//! number  = digits ["." digits] [("e" | "E") ["+" | "-"] digits]   (or "." digits ...)
//! ```
//! Names are `[A-Za-z_][A-Za-z0-9_]*`: the constants `pi` and `e`, the functions of
//! [`FUNCTIONS`], or parameters resolved by the caller. The evaluator works while it parses
//! (no tree is built). Invariants: every intermediate result is finite (a division by zero,
//! an overflow or a domain error such as `sqrt(-1)` is an error naming its place); nesting
//! deeper than [`MAX_DEPTH`] and text longer than [`MAX_LEN`] are refused, so hostile input
//! cannot exhaust the stack; no input panics.

use std::fmt;

/// Deepest nesting of parentheses, unary signs, powers and calls accepted.
pub const MAX_DEPTH: usize = 64;
/// Longest expression accepted, bytes.
pub const MAX_LEN: usize = 4096;
/// Names that are constants and may not be used as parameter names.
pub const CONSTANTS: [&str; 2] = ["pi", "e"];
/// Functions known to expressions (and so reserved as parameter names), with their arity
/// (`None`: one or more arguments).
pub const FUNCTIONS: [(&str, Option<usize>); 18] = [
    ("sqrt", Some(1)),
    ("abs", Some(1)),
    ("exp", Some(1)),
    ("ln", Some(1)),
    ("log10", Some(1)),
    ("sin", Some(1)),
    ("cos", Some(1)),
    ("tan", Some(1)),
    ("asin", Some(1)),
    ("acos", Some(1)),
    ("atan", Some(1)),
    ("atan2", Some(2)),
    ("hypot", Some(2)),
    ("floor", Some(1)),
    ("ceil", Some(1)),
    ("round", Some(1)),
    ("min", None),
    ("max", None),
];

/// Why an expression could not be evaluated, and where (byte range in the expression).
#[derive(Clone, Debug, PartialEq)]
pub struct ExprError {
    /// Byte offset of the offending token in the expression text.
    pub offset: usize,
    /// Its length in bytes (at least 1 unless the expression is empty).
    pub len: usize,
    /// What went wrong.
    pub kind: ExprErrorKind,
}

/// The kinds of expression error.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub enum ExprErrorKind {
    /// Not a well-formed expression; the text says what was expected.
    Syntax(String),
    /// A name that is neither a constant, a function nor a known parameter.
    UnknownName(String),
    /// A divisor evaluated to zero.
    DivisionByZero,
    /// An operation produced an infinite or undefined value; names the operation.
    NotFinite(String),
    /// Nesting deeper than [`MAX_DEPTH`] or text longer than [`MAX_LEN`].
    TooComplex,
}

impl fmt::Display for ExprError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match &self.kind {
            ExprErrorKind::Syntax(m) => write!(f, "bad expression: {m}"),
            ExprErrorKind::UnknownName(n) => write!(f, "unknown parameter `{n}` in expression"),
            ExprErrorKind::DivisionByZero => write!(f, "division by zero in expression"),
            ExprErrorKind::NotFinite(what) => {
                write!(f, "{what} is not a finite number in expression")
            }
            ExprErrorKind::TooComplex => write!(
                f,
                "expression too complex (more than {MAX_DEPTH} levels of nesting or \
                 {MAX_LEN} characters)"
            ),
        }
    }
}

/// Whether `name` can name a parameter: an identifier that is no constant or function.
pub fn is_identifier(name: &str) -> bool {
    let mut chars = name.chars();
    matches!(chars.next(), Some(c) if c.is_ascii_alphabetic() || c == '_')
        && chars.all(|c| c.is_ascii_alphanumeric() || c == '_')
}

/// Whether `name` is a constant or function of the expression language.
pub fn is_reserved(name: &str) -> bool {
    CONSTANTS.contains(&name) || FUNCTIONS.iter().any(|(f, _)| *f == name) || name == "log"
}

/// Evaluates `text`, resolving parameter names with `lookup`.
pub fn eval(text: &str, lookup: &dyn Fn(&str) -> Option<f64>) -> Result<f64, ExprError> {
    if text.len() > MAX_LEN {
        // The span is the first character, whole (it may take several bytes).
        return Err(ExprError {
            offset: 0,
            len: text.chars().next().map_or(0, char::len_utf8),
            kind: ExprErrorKind::TooComplex,
        });
    }
    let mut p = Parser {
        src: text,
        pos: 0,
        depth: 0,
        lookup,
    };
    p.skip_ws();
    if p.pos == text.len() {
        return Err(p.syntax(0, 0, "the expression is empty"));
    }
    let v = p.expr()?;
    p.skip_ws();
    if let Some(c) = p.peek() {
        return Err(p.syntax(
            p.pos,
            c.len_utf8(),
            format!("unexpected `{c}` after a complete value"),
        ));
    }
    Ok(v)
}

struct Parser<'a> {
    src: &'a str,
    pos: usize,
    depth: usize,
    lookup: &'a dyn Fn(&str) -> Option<f64>,
}

type R = Result<f64, ExprError>;

impl Parser<'_> {
    fn peek(&self) -> Option<char> {
        self.src[self.pos..].chars().next()
    }

    fn peek2(&self) -> Option<char> {
        self.src[self.pos..].chars().nth(1)
    }

    fn skip_ws(&mut self) {
        while let Some(c) = self.peek() {
            if !c.is_whitespace() {
                break;
            }
            self.pos += c.len_utf8();
        }
    }

    fn syntax(&self, offset: usize, len: usize, m: impl Into<String>) -> ExprError {
        ExprError {
            offset,
            len,
            kind: ExprErrorKind::Syntax(m.into()),
        }
    }

    fn finite(&self, v: f64, offset: usize, len: usize, what: &str) -> R {
        if v.is_finite() {
            Ok(v)
        } else {
            Err(ExprError {
                offset,
                len,
                kind: ExprErrorKind::NotFinite(what.to_string()),
            })
        }
    }

    fn enter(&mut self) -> Result<(), ExprError> {
        self.depth += 1;
        if self.depth > MAX_DEPTH {
            // The token that went too deep, or nothing at the end of the text.
            Err(ExprError {
                offset: self.pos,
                len: self.peek().map_or(0, char::len_utf8),
                kind: ExprErrorKind::TooComplex,
            })
        } else {
            Ok(())
        }
    }

    fn expr(&mut self) -> R {
        let mut v = self.term()?;
        loop {
            self.skip_ws();
            let at = self.pos;
            match self.peek() {
                Some('+') => {
                    self.pos += 1;
                    let r = self.term()?;
                    v = self.finite(v + r, at, 1, "the sum")?;
                }
                Some('-') => {
                    self.pos += 1;
                    let r = self.term()?;
                    v = self.finite(v - r, at, 1, "the difference")?;
                }
                _ => return Ok(v),
            }
        }
    }

    fn term(&mut self) -> R {
        let mut v = self.unary()?;
        loop {
            self.skip_ws();
            let at = self.pos;
            match (self.peek(), self.peek2()) {
                (Some('*'), Some('*')) => return Ok(v), // a power, handled below `unary`
                (Some('*'), _) => {
                    self.pos += 1;
                    let r = self.unary()?;
                    v = self.finite(v * r, at, 1, "the product")?;
                }
                (Some('/'), _) => {
                    self.pos += 1;
                    let r = self.unary()?;
                    if r == 0.0 {
                        return Err(ExprError {
                            offset: at,
                            len: 1,
                            kind: ExprErrorKind::DivisionByZero,
                        });
                    }
                    v = self.finite(v / r, at, 1, "the quotient")?;
                }
                _ => return Ok(v),
            }
        }
    }

    fn unary(&mut self) -> R {
        self.enter()?;
        self.skip_ws();
        let v = match self.peek() {
            Some('-') => {
                self.pos += 1;
                -self.unary()?
            }
            Some('+') => {
                self.pos += 1;
                self.unary()?
            }
            _ => self.power()?,
        };
        self.depth -= 1;
        Ok(v)
    }

    fn power(&mut self) -> R {
        let base = self.primary()?;
        self.skip_ws();
        let at = self.pos;
        let op_len = match (self.peek(), self.peek2()) {
            (Some('^'), _) => 1,
            (Some('*'), Some('*')) => 2,
            _ => return Ok(base),
        };
        self.pos += op_len;
        let exponent = self.unary()?;
        if base == 0.0 && exponent < 0.0 {
            return Err(ExprError {
                offset: at,
                len: op_len,
                kind: ExprErrorKind::DivisionByZero,
            });
        }
        self.finite(base.powf(exponent), at, op_len, "the power")
    }

    fn primary(&mut self) -> R {
        self.enter()?;
        self.skip_ws();
        let start = self.pos;
        let v = match self.peek() {
            None => {
                return Err(self.syntax(start, 0, "expected a number, a name or `(` at the end"))
            }
            Some(c) if c.is_ascii_digit() || c == '.' => self.number()?,
            Some(c) if c.is_ascii_alphabetic() || c == '_' => self.name()?,
            Some('(') => {
                self.pos += 1;
                let v = self.expr()?;
                self.skip_ws();
                if self.peek() != Some(')') {
                    return Err(self.unexpected("`)` to close the `(`"));
                }
                self.pos += 1;
                v
            }
            Some(_) => return Err(self.unexpected("a number, a name or `(`")),
        };
        self.depth -= 1;
        Ok(v)
    }

    fn unexpected(&self, expected: &str) -> ExprError {
        match self.peek() {
            Some(c) => self.syntax(
                self.pos,
                c.len_utf8(),
                format!("expected {expected}, found `{c}`"),
            ),
            None => self.syntax(self.pos, 0, format!("expected {expected} at the end")),
        }
    }

    fn digits(&mut self) -> usize {
        let start = self.pos;
        while matches!(self.peek(), Some(c) if c.is_ascii_digit()) {
            self.pos += 1;
        }
        self.pos - start
    }

    fn number(&mut self) -> R {
        let start = self.pos;
        let mut n = self.digits();
        if self.peek() == Some('.') {
            self.pos += 1;
            n += self.digits();
        }
        if n == 0 {
            return Err(self.syntax(start, 1, "a lone `.` is not a number"));
        }
        if matches!(self.peek(), Some('e' | 'E')) {
            let mark = self.pos;
            self.pos += 1;
            if matches!(self.peek(), Some('+' | '-')) {
                self.pos += 1;
            }
            if self.digits() == 0 {
                self.pos = mark; // not an exponent; the `e` is left for the caller to reject
            }
        }
        let text = &self.src[start..self.pos];
        let v: f64 = text
            .parse()
            .map_err(|_| self.syntax(start, text.len(), format!("`{text}` is not a number")))?;
        self.finite(v, start, text.len(), "the number")
    }

    fn name(&mut self) -> R {
        let start = self.pos;
        while matches!(self.peek(), Some(c) if c.is_ascii_alphanumeric() || c == '_') {
            self.pos += 1;
        }
        let name = &self.src[start..self.pos];
        let len = name.len();
        self.skip_ws();
        if self.peek() == Some('(') {
            return self.call(name, start);
        }
        match name {
            "pi" => return Ok(std::f64::consts::PI),
            "e" => return Ok(std::f64::consts::E),
            _ => {}
        }
        if is_reserved(name) {
            return Err(self.syntax(
                start,
                len,
                format!("`{name}` is a function: write {name}(...)"),
            ));
        }
        match (self.lookup)(name) {
            Some(v) => self.finite(v, start, len, &format!("parameter `{name}`")),
            None => Err(ExprError {
                offset: start,
                len,
                kind: ExprErrorKind::UnknownName(name.to_string()),
            }),
        }
    }

    fn call(&mut self, name: &str, start: usize) -> R {
        let len = name.len();
        if name == "log" {
            return Err(self.syntax(start, len, "`log` is ambiguous: write ln(x) or log10(x)"));
        }
        let Some(&(_, arity)) = FUNCTIONS.iter().find(|(f, _)| *f == name) else {
            return Err(self.syntax(start, len, format!("unknown function `{name}`")));
        };
        self.enter()?;
        self.pos += 1; // the `(`
        let mut args = Vec::new();
        loop {
            args.push(self.expr()?);
            self.skip_ws();
            match self.peek() {
                Some(',') => self.pos += 1,
                Some(')') => {
                    self.pos += 1;
                    break;
                }
                _ => return Err(self.unexpected(&format!("`,` or `)` in the call of `{name}`"))),
            }
        }
        self.depth -= 1;
        let count_ok = match arity {
            Some(n) => args.len() == n,
            None => !args.is_empty(),
        };
        if !count_ok {
            let want = arity.map_or("1 or more".to_string(), |n| n.to_string());
            return Err(self.syntax(
                start,
                len,
                format!("`{name}` takes {want} argument(s), found {}", args.len()),
            ));
        }
        let a = args[0];
        let v = match name {
            "sqrt" => a.sqrt(),
            "abs" => a.abs(),
            "exp" => a.exp(),
            "ln" => {
                if a <= 0.0 {
                    f64::NAN
                } else {
                    a.ln()
                }
            }
            "log10" => {
                if a <= 0.0 {
                    f64::NAN
                } else {
                    a.log10()
                }
            }
            "sin" => a.sin(),
            "cos" => a.cos(),
            "tan" => a.tan(),
            "asin" => a.asin(),
            "acos" => a.acos(),
            "atan" => a.atan(),
            "atan2" => a.atan2(args[1]),
            "hypot" => a.hypot(args[1]),
            "floor" => a.floor(),
            "ceil" => a.ceil(),
            "round" => a.round(),
            "min" => args.iter().copied().fold(f64::INFINITY, f64::min),
            "max" => args.iter().copied().fold(f64::NEG_INFINITY, f64::max),
            _ => unreachable!("every name of FUNCTIONS is evaluated"),
        };
        self.finite(v, start, len, &format!("`{name}(...)`"))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn params(name: &str) -> Option<f64> {
        match name {
            "gap" => Some(0.5),
            "w" => Some(2.0),
            "huge" => Some(1e300),
            _ => None,
        }
    }

    fn ev(s: &str) -> R {
        eval(s, &params)
    }

    fn kind(s: &str) -> ExprErrorKind {
        ev(s).unwrap_err().kind
    }

    #[test]
    fn precedence_and_associativity() {
        assert_eq!(ev("1 + 2 * 3").unwrap(), 7.0);
        assert_eq!(ev("(1 + 2) * 3").unwrap(), 9.0);
        assert_eq!(ev("10 - 4 - 3").unwrap(), 3.0);
        assert_eq!(ev("8 / 4 / 2").unwrap(), 1.0);
        assert_eq!(ev("2 ^ 3 ^ 2").unwrap(), 512.0);
        assert_eq!(ev("2 ** 3").unwrap(), 8.0);
        assert_eq!(ev("-2 ^ 2").unwrap(), -4.0);
        assert_eq!(ev("2 ^ -1").unwrap(), 0.5);
        assert_eq!(ev("--3").unwrap(), 3.0);
        assert_eq!(ev("+3 - -3").unwrap(), 6.0);
        assert_eq!(ev("2*-3").unwrap(), -6.0);
        assert_eq!(ev("3 * 2 ** 2").unwrap(), 12.0);
    }

    #[test]
    fn numbers_names_constants_and_functions() {
        assert_eq!(ev("1.5e-3").unwrap(), 1.5e-3);
        assert_eq!(ev("2E+2").unwrap(), 200.0);
        assert_eq!(ev(".25").unwrap(), 0.25);
        assert_eq!(ev("3.").unwrap(), 3.0);
        assert_eq!(ev("gap + 2*gap").unwrap(), 1.5);
        assert_eq!(ev("w/2 - gap").unwrap(), 0.5);
        assert_eq!(ev("pi").unwrap(), std::f64::consts::PI);
        assert_eq!(ev("ln(e)").unwrap(), 1.0);
        assert_eq!(ev("sqrt(16)").unwrap(), 4.0);
        assert_eq!(ev("abs(-2)").unwrap(), 2.0);
        assert_eq!(ev("min(3, w, 5)").unwrap(), 2.0);
        assert_eq!(ev("max(gap, 0.1)").unwrap(), 0.5);
        assert_eq!(ev("atan2(1, 1)").unwrap(), std::f64::consts::FRAC_PI_4);
        assert_eq!(ev("hypot(3, 4)").unwrap(), 5.0);
        assert_eq!(ev("log10(1000)").unwrap(), 3.0);
        assert_eq!(ev("floor(2.7) + ceil(0.2) + round(1.5)").unwrap(), 5.0);
        assert!((ev("sin(pi/6)").unwrap() - 0.5).abs() < 1e-15);
        assert!((ev("cos(0) + tan(0) + exp(0)").unwrap() - 2.0).abs() < 1e-15);
        assert_eq!(ev("sqrt (4)").unwrap(), 2.0);
    }

    #[test]
    fn syntax_errors_point_at_the_offending_token() {
        let e = ev("1 + * 2").unwrap_err();
        assert_eq!(e.offset, 4);
        assert!(matches!(e.kind, ExprErrorKind::Syntax(_)));
        let e = ev("(1 + 2").unwrap_err();
        assert_eq!(e.offset, 6);
        let e = ev("2 3").unwrap_err();
        assert_eq!(e.offset, 2);
        assert!(e.to_string().contains("unexpected `3`"), "{e}");
        assert!(matches!(kind(""), ExprErrorKind::Syntax(_)));
        assert!(matches!(kind("   "), ExprErrorKind::Syntax(_)));
        assert!(matches!(kind("."), ExprErrorKind::Syntax(_)));
        assert!(matches!(kind("2e"), ExprErrorKind::Syntax(_)));
        assert!(matches!(kind("1 +"), ExprErrorKind::Syntax(_)));
        assert!(matches!(kind("foo(1)"), ExprErrorKind::Syntax(_)));
        assert!(matches!(kind("log(10)"), ExprErrorKind::Syntax(_)));
        assert!(matches!(kind("sqrt"), ExprErrorKind::Syntax(_)));
        assert!(matches!(kind("atan2(1)"), ExprErrorKind::Syntax(_)));
        assert!(matches!(kind("min()"), ExprErrorKind::Syntax(_)));
        assert!(matches!(kind("max(1,)"), ExprErrorKind::Syntax(_)));
        assert!(matches!(kind("2 µ"), ExprErrorKind::Syntax(_)));
        assert!(matches!(kind("1 # 2"), ExprErrorKind::Syntax(_)));
    }

    #[test]
    fn unknown_names_are_reported_with_their_place() {
        let e = ev("gap + gapp").unwrap_err();
        assert_eq!((e.offset, e.len), (6, 4));
        assert_eq!(e.kind, ExprErrorKind::UnknownName("gapp".into()));
    }

    #[test]
    fn non_finite_results_are_errors() {
        assert_eq!(kind("1 / 0"), ExprErrorKind::DivisionByZero);
        assert_eq!(kind("1 / (gap - 0.5)"), ExprErrorKind::DivisionByZero);
        assert_eq!(kind("0 ^ -1"), ExprErrorKind::DivisionByZero);
        assert!(matches!(kind("sqrt(-1)"), ExprErrorKind::NotFinite(_)));
        assert!(matches!(kind("ln(0)"), ExprErrorKind::NotFinite(_)));
        assert!(matches!(kind("log10(-1)"), ExprErrorKind::NotFinite(_)));
        assert!(matches!(kind("exp(1000)"), ExprErrorKind::NotFinite(_)));
        assert!(matches!(kind("huge * huge"), ExprErrorKind::NotFinite(_)));
        assert!(matches!(kind("1e999"), ExprErrorKind::NotFinite(_)));
        assert!(matches!(kind("acos(2)"), ExprErrorKind::NotFinite(_)));
        assert!(matches!(kind("(-8) ^ 0.5"), ExprErrorKind::NotFinite(_)));
    }

    #[test]
    fn deep_nesting_is_refused_not_overflowed() {
        let deep = format!("{}1{}", "(".repeat(100_000 / 2), ")".repeat(100_000 / 2));
        assert_eq!(
            kind(&deep[..MAX_LEN.min(deep.len())]),
            ExprErrorKind::TooComplex
        );
        assert_eq!(
            kind(&"-".repeat(200).to_string()),
            ExprErrorKind::TooComplex
        );
        assert_eq!(
            kind(&format!("{}1", "-".repeat(3000))),
            ExprErrorKind::TooComplex
        );
        assert_eq!(
            kind(&format!("{}1{}", "sqrt(".repeat(100), ")".repeat(100))),
            ExprErrorKind::TooComplex
        );
        assert_eq!(kind(&"1+".repeat(3000)), ExprErrorKind::TooComplex);
        let nested = format!("{}1{}", "(".repeat(20), ")".repeat(20));
        assert_eq!(ev(&nested).unwrap(), 1.0);
        let long_flat = format!("1{}", "+1".repeat(1000));
        assert_eq!(ev(&long_flat).unwrap(), 1001.0);
    }

    #[test]
    fn identifiers_and_reserved_names() {
        assert!(is_identifier("gap_2"));
        assert!(is_identifier("_x"));
        assert!(!is_identifier("2x"));
        assert!(!is_identifier("a-b"));
        assert!(!is_identifier(""));
        assert!(is_reserved("pi") && is_reserved("sqrt") && is_reserved("log"));
        assert!(!is_reserved("gap"));
    }

    /// Seeded random byte soup never panics and never returns a non-finite value.
    #[test]
    fn random_input_never_panics() {
        let alphabet: Vec<char> = "0123456789.eE+-*/^() ,pisqrtgapwminax_µ".chars().collect();
        let mut state: u64 = 0x2545_f491_4f6c_dd1d;
        for _ in 0..20_000 {
            let mut s = String::new();
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            let n = (state % 24) as usize;
            for _ in 0..n {
                state ^= state << 13;
                state ^= state >> 7;
                state ^= state << 17;
                s.push(alphabet[(state % alphabet.len() as u64) as usize]);
            }
            if let Ok(v) = ev(&s) {
                assert!(v.is_finite(), "{s} -> {v}");
            }
        }
    }
}
