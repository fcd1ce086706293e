//! A check's expression condition (or subject) evaluated without the template engine
//! when it is one of the simple forms the shipped checks use: fields and whole numbers
//! multiplied and compared (`item.a * item.b < item.c`, `2 * item.m < item.r`),
//! `is [not] none` and `is [not] number` tests, `or`, and a list's filtered length
//! (`item.touch | selectattr('margin_ma', 'number') | selectattr('margin_ma', 'lt', 0) |
//! list | length > 0`, `rejectattr` too). Compiling an expression into a template costs
//! about 40,000 instructions, more than everything else a check does. Any other form,
//! or a field that is not there, is left to minijinja, so every condition holds exactly
//! where the engine says it does: the tests below compare the two on sample values and
//! `tests/it/check_predicates.rs` on every check of every fixture.
//!
//! Comparisons and equality are the engine's own (`Value`'s ordering, which its `<` and
//! `==` use); products are computed as the engine computes them (floats where either
//! side is one, integers checked).

use minijinja::value::{Value, ValueKind};

/// Whether `expression` holds for `item` in `report` as the engine would say, or `None`
/// where the engine must decide.
pub fn holds(expression: &str, item: &Value, report: &Value) -> Option<bool> {
    let mut parser = Parser { rest: expression };
    let expr = parser.expression()?;
    parser.end()?;
    expr.holds(item, report)
}

/// The subject a `subject = "item.x"` expression gives (`None` inside: the field is
/// none, so no subject), or `None` where the engine must decide.
pub fn subject(expression: &str, item: &Value, report: &Value) -> Option<Option<String>> {
    let mut parser = Parser { rest: expression };
    let path = parser.path()?;
    parser.end()?;
    let value = path.get(item, report)?;
    // The engine prints the value unless it is none: `{% if s is not none %}{{ s }}`.
    Some((!value.is_none()).then(|| value.to_string()))
}

/// The most items a filtered list may have for this module to count it; the engine
/// counts its work against a fuel allowance (`checks::CHECK_FUEL`), and a longer list is
/// left to it.
const MAX_ITEMS: usize = 256;

enum Expr<'a> {
    Or(Box<Expr<'a>>, Box<Expr<'a>>),
    Compare(Operand<'a>, Cmp, Operand<'a>),
    /// `is none` (true) or `is number` (false); `bool` false where it reads `is not`.
    Is(Path<'a>, bool, bool),
    Truthy(Operand<'a>),
}

#[derive(Clone, Copy)]
enum Cmp {
    Lt,
    Le,
    Gt,
    Ge,
    Eq,
    Ne,
}

enum Operand<'a> {
    Field(Path<'a>),
    Whole(i64),
    Product(Box<Operand<'a>>, Box<Operand<'a>>),
    /// `path | selectattr(...) | rejectattr(...) | list | length`.
    Count(Path<'a>, Vec<Select<'a>>),
}

struct Select<'a> {
    reject: bool,
    attribute: &'a str,
    test: SelectTest,
}

enum SelectTest {
    Truthy,
    Number,
    None,
    Compare(Cmp, i64),
}

/// `item.a.b` or `report.a`.
struct Path<'a> {
    root: &'a str,
    names: Vec<&'a str>,
}

struct Parser<'a> {
    rest: &'a str,
}

impl<'a> Parser<'a> {
    fn skip(&mut self) {
        self.rest = self.rest.trim_start();
    }

    /// Takes `token` if it comes next (a word only where a word ends there).
    fn eat(&mut self, token: &str) -> bool {
        self.skip();
        let Some(after) = self.rest.strip_prefix(token) else {
            return false;
        };
        let word = token.bytes().all(|b| b.is_ascii_alphabetic());
        if word && after.starts_with(|c: char| c.is_ascii_alphanumeric() || c == '_' || c == '.') {
            return false;
        }
        self.rest = after;
        true
    }

    fn end(&mut self) -> Option<()> {
        self.skip();
        self.rest.is_empty().then_some(())
    }

    /// A run of name characters and dots.
    fn word(&mut self) -> Option<&'a str> {
        self.skip();
        let len = self
            .rest
            .find(|c: char| !(c.is_ascii_alphanumeric() || c == '_' || c == '.'))
            .unwrap_or(self.rest.len());
        let (word, rest) = self.rest.split_at(len);
        self.rest = rest;
        (!word.is_empty()).then_some(word)
    }

    fn path(&mut self) -> Option<Path<'a>> {
        let word = self.word()?;
        let mut names = word.split('.');
        let root = names.next()?;
        if root != "item" && root != "report" {
            return None;
        }
        let names: Vec<&str> = names.collect();
        let is_name = |n: &&str| {
            let mut bytes = n.bytes();
            bytes
                .next()
                .is_some_and(|b| b.is_ascii_alphabetic() || b == b'_')
                && bytes.all(|b| b.is_ascii_alphanumeric() || b == b'_')
        };
        (!names.is_empty() && names.iter().all(is_name)).then_some(Path { root, names })
    }

    /// A whole number literal small enough to be exact as a float too.
    fn whole(&mut self) -> Option<i64> {
        self.skip();
        let len = self
            .rest
            .find(|c: char| !c.is_ascii_digit())
            .unwrap_or(self.rest.len());
        if len == 0 || len > 15 {
            return None;
        }
        let (digits, rest) = self.rest.split_at(len);
        // `2.5` or `2e3` is a float literal; `2_000` another form: the engine's.
        if rest.starts_with(|c: char| c.is_ascii_alphanumeric() || c == '.' || c == '_') {
            return None;
        }
        self.rest = rest;
        digits.parse().ok()
    }

    /// A quoted name: `'margin_ma'`.
    fn quoted(&mut self) -> Option<&'a str> {
        self.skip();
        let quote = self
            .rest
            .chars()
            .next()
            .filter(|&c| c == '\'' || c == '"')?;
        let inner = &self.rest[1..];
        let close = inner.find(quote)?;
        let text = &inner[..close];
        self.rest = &inner[close + 1..];
        let mut bytes = text.bytes();
        (bytes
            .next()
            .is_some_and(|b| b.is_ascii_alphabetic() || b == b'_')
            && bytes.all(|b| b.is_ascii_alphanumeric() || b == b'_'))
        .then_some(text)
    }

    fn expression(&mut self) -> Option<Expr<'a>> {
        let mut expr = self.term()?;
        while self.eat("or") {
            expr = Expr::Or(Box::new(expr), Box::new(self.term()?));
        }
        Some(expr)
    }

    fn term(&mut self) -> Option<Expr<'a>> {
        let left = self.operand()?;
        if self.eat("is") {
            // A test binds to the field alone: `2 * x is none` means `2 * (x is none)`.
            let Operand::Field(path) = left else {
                return None;
            };
            let positive = !self.eat("not");
            let none = if self.eat("none") {
                true
            } else if self.eat("number") {
                false
            } else {
                return None;
            };
            return Some(Expr::Is(path, none, positive));
        }
        Some(match self.cmp() {
            Some(cmp) => Expr::Compare(left, cmp, self.operand()?),
            None => Expr::Truthy(left),
        })
    }

    fn cmp(&mut self) -> Option<Cmp> {
        [
            ("<=", Cmp::Le),
            (">=", Cmp::Ge),
            ("==", Cmp::Eq),
            ("!=", Cmp::Ne),
            ("<", Cmp::Lt),
            (">", Cmp::Gt),
        ]
        .into_iter()
        .find_map(|(token, cmp)| self.eat(token).then_some(cmp))
    }

    fn operand(&mut self) -> Option<Operand<'a>> {
        let mut operand = self.atom()?;
        while self.eat("*") {
            operand = Operand::Product(Box::new(operand), Box::new(self.atom()?));
        }
        // `**`, `/`, `//`, `%`, `+`, `-`, `~`, a bracket: the engine's.
        self.skip();
        if self
            .rest
            .starts_with(['*', '/', '%', '+', '-', '~', '[', '('])
        {
            return None;
        }
        Some(operand)
    }

    fn atom(&mut self) -> Option<Operand<'a>> {
        self.skip();
        if self.rest.starts_with(|c: char| c.is_ascii_digit()) {
            return Some(Operand::Whole(self.whole()?));
        }
        let path = self.path()?;
        if !self.eat("|") {
            return Some(Operand::Field(path));
        }
        let mut selects = Vec::new();
        loop {
            let filter = self.word()?;
            match filter {
                "selectattr" | "rejectattr" => {
                    selects.push(self.select(filter == "rejectattr")?);
                    if !self.eat("|") {
                        return None;
                    }
                }
                "list" => {
                    if !self.eat("|") {
                        return None;
                    }
                }
                "length" => return Some(Operand::Count(path, selects)),
                _ => return None,
            }
        }
    }

    /// `('attribute'[, 'test'[, whole number]])`.
    fn select(&mut self, reject: bool) -> Option<Select<'a>> {
        if !self.eat("(") {
            return None;
        }
        let attribute = self.quoted()?;
        let test = if self.eat(",") {
            let name = self.quoted()?;
            let arg = if self.eat(",") {
                Some(self.whole()?)
            } else {
                None
            };
            match (name, arg) {
                ("number", None) => SelectTest::Number,
                ("none", None) => SelectTest::None,
                ("lt", Some(n)) => SelectTest::Compare(Cmp::Lt, n),
                ("le", Some(n)) => SelectTest::Compare(Cmp::Le, n),
                ("gt", Some(n)) => SelectTest::Compare(Cmp::Gt, n),
                ("ge", Some(n)) => SelectTest::Compare(Cmp::Ge, n),
                ("eq", Some(n)) => SelectTest::Compare(Cmp::Eq, n),
                ("ne", Some(n)) => SelectTest::Compare(Cmp::Ne, n),
                _ => return None,
            }
        } else {
            SelectTest::Truthy
        };
        self.eat(")").then_some(Select {
            reject,
            attribute,
            test,
        })
    }
}

impl Path<'_> {
    /// The value at the path, or `None` where the engine must decide (a name that is not
    /// there, which a strict engine reports).
    fn get(&self, item: &Value, report: &Value) -> Option<Value> {
        let mut value = if self.root == "item" { item } else { report }.clone();
        for name in &self.names {
            if value.is_undefined() {
                return None;
            }
            value = value.get_attr(name).ok()?;
        }
        (!value.is_undefined()).then_some(value)
    }
}

impl Cmp {
    /// The engine's comparison of two values (`Value`'s ordering and equality).
    fn apply(self, a: &Value, b: &Value) -> bool {
        match self {
            Cmp::Lt => a < b,
            Cmp::Le => a <= b,
            Cmp::Gt => a > b,
            Cmp::Ge => a >= b,
            Cmp::Eq => a == b,
            Cmp::Ne => a != b,
        }
    }
}

/// The engine's `number` test, which takes booleans too.
fn is_number(value: &Value) -> bool {
    matches!(value.kind(), ValueKind::Number | ValueKind::Bool)
}

impl Expr<'_> {
    fn holds(&self, item: &Value, report: &Value) -> Option<bool> {
        Some(match self {
            // `or` stops at the first side that holds, as the engine does.
            Expr::Or(a, b) => a.holds(item, report)? || b.holds(item, report)?,
            Expr::Compare(a, cmp, b) => cmp.apply(&a.value(item, report)?, &b.value(item, report)?),
            Expr::Is(path, none, positive) => {
                let value = path.get(item, report)?;
                (if *none {
                    value.is_none()
                } else {
                    is_number(&value)
                }) == *positive
            }
            Expr::Truthy(a) => a.value(item, report)?.is_true(),
        })
    }
}

impl Operand<'_> {
    fn value(&self, item: &Value, report: &Value) -> Option<Value> {
        match self {
            Operand::Field(path) => path.get(item, report),
            Operand::Whole(n) => Some(Value::from(*n)),
            Operand::Product(a, b) => product(&a.value(item, report)?, &b.value(item, report)?),
            Operand::Count(path, selects) => {
                let list = path.get(item, report)?;
                // A list only; anything else is filtered as the engine decides.
                if list.kind() != ValueKind::Seq || list.len()? > MAX_ITEMS {
                    return None;
                }
                let mut count: u64 = 0;
                for entry in list.try_iter().ok()? {
                    let mut kept = true;
                    for select in selects {
                        let field = entry.get_attr(select.attribute).ok()?;
                        if field.is_undefined() {
                            return None;
                        }
                        let passed = match select.test {
                            SelectTest::Truthy => field.is_true(),
                            SelectTest::Number => is_number(&field),
                            SelectTest::None => field.is_none(),
                            SelectTest::Compare(cmp, n) => cmp.apply(&field, &Value::from(n)),
                        };
                        if passed == select.reject {
                            kept = false;
                            break;
                        }
                    }
                    count += u64::from(kept);
                }
                Some(Value::from(count))
            }
        }
    }
}

/// `a * b` as the engine computes it for two numbers: a float product where either is a
/// float, a checked integer product where both are integers; `None` for anything else.
fn product(a: &Value, b: &Value) -> Option<Value> {
    if !a.is_number() || !b.is_number() {
        return None;
    }
    if a.is_integer() && b.is_integer() {
        let (a, b) = (
            i64::try_from(a.clone()).ok()?,
            i64::try_from(b.clone()).ok()?,
        );
        return a.checked_mul(b).map(Value::from);
    }
    // An integer is exact as a float below 2^53; beyond, the engine's rounding is its own.
    let float = |v: &Value| -> Option<f64> {
        if v.is_integer() {
            let n = i64::try_from(v.clone()).ok()?;
            (n.unsigned_abs() < 1 << 53).then_some(n as f64)
        } else {
            f64::try_from(v.clone()).ok()
        }
    };
    Some(Value::from(float(a)? * float(b)?))
}

#[cfg(test)]
mod tests {
    use super::*;
    use minijinja::context;

    /// What the engine says, set up as the checks set it up.
    fn engine(expression: &str, item: &Value, report: &Value) -> Result<bool, String> {
        let env = crate::checks::expression_environment();
        env.render_str(
            &format!("{{% if {expression} %}}1{{% endif %}}"),
            context! { item => item.clone(), report => report.clone() },
        )
        .map(|s| s == "1")
        .map_err(|e| e.to_string())
    }

    fn engine_subject(expression: &str, item: &Value) -> Result<String, String> {
        let env = crate::checks::expression_environment();
        env.render_str(
            &format!(
                "{{% set s = ({expression}) %}}{{% if s is not none %}}{{{{ s }}}}{{% endif %}}"
            ),
            context! { item => item.clone(), report => Value::from(()) },
        )
        .map_err(|e| e.to_string())
    }

    fn sample() -> (Value, Value) {
        let item = Value::from(minijinja::value::Serde(serde_json::json!({
            "circuit": "SELV1",
            "rated_ac_v": 250.0,
            "count_in_series": 2,
            "working_rms_v": 480.5,
            "margin_mm": 1.25,
            "required_creepage_mm": 2.5,
            "nothing": null,
            "flag": true,
            "off": false,
            "zero": 0,
            "huge": 9_007_199_254_740_993u64,
            "big": 4_000_000_000_000i64,
            "word": "w",
            "touch": [
                { "circuit": "a", "margin_ma": 0.1, "flag": true },
                { "circuit": "b", "margin_ma": -0.05, "flag": false },
                { "circuit": "c", "margin_ma": null, "flag": true },
                { "circuit": "d", "margin_ma": -2, "flag": 0 },
                { "circuit": "e", "margin_ma": "x", "flag": "" },
            ],
            "empty": [],
            "long": (0..300).map(|i| serde_json::json!({ "n": i })).collect::<Vec<_>>(),
        })));
        let report = Value::from(minijinja::value::Serde(
            serde_json::json!({ "limit": 3.0, "count": 4 }),
        ));
        (item, report)
    }

    /// Every form evaluated here against the engine, on floats, whole numbers, booleans,
    /// null, strings and lists.
    #[test]
    fn expressions_hold_where_the_engine_says_they_do() {
        let (item, report) = sample();
        let fields = [
            "item.rated_ac_v",
            "item.count_in_series",
            "item.working_rms_v",
            "item.margin_mm",
            "item.nothing",
            "item.flag",
            "item.off",
            "item.zero",
            "item.huge",
            "item.word",
            "report.limit",
            "report.count",
            "2",
            "0",
        ];
        let mut expressions = Vec::new();
        for a in fields {
            expressions.push(a.to_string());
            for test in ["is none", "is not none", "is number", "is not number"] {
                if !a.starts_with(char::is_numeric) {
                    expressions.push(format!("{a} {test}"));
                    expressions.push(format!("{a} {test} or item.flag"));
                }
            }
            for b in fields {
                for cmp in ["<", "<=", ">", ">=", "==", "!="] {
                    expressions.push(format!("{a} {cmp} {b}"));
                }
                expressions.push(format!("{a} * {b} < item.working_rms_v"));
                expressions.push(format!("{a} * {b} >= report.limit"));
            }
        }
        let selections = [
            "selectattr('margin_ma', 'number')",
            "rejectattr('margin_ma', 'number')",
            "selectattr('margin_ma', 'number') | selectattr('margin_ma', 'lt', 0)",
            "selectattr(\"margin_ma\", \"number\")|rejectattr('margin_ma','ge',0)",
            "selectattr('flag')",
            "rejectattr('flag')",
            "selectattr('margin_ma', 'none')",
            "selectattr('margin_ma', 'gt', 0) | list",
        ];
        for selection in selections {
            for list in ["item.touch", "item.empty"] {
                for tail in ["| list | length > 0", "| length == 2", "| length"] {
                    expressions.push(format!("{list} | {selection} {tail}"));
                }
            }
        }
        expressions.extend(
            [
                "item.margin_mm is none or 2 * item.margin_mm < item.required_creepage_mm",
                "item.nothing is none or 2 * item.nothing < item.required_creepage_mm",
                "item.rated_ac_v * item.count_in_series < item.working_rms_v",
                "item.big * item.big > 0",
                "item.count_in_series*item.count_in_series*2 == 8",
                "item.off or item.zero or item.touch | length",
            ]
            .map(String::from),
        );
        let mut native_count = 0;
        for expression in &expressions {
            if let Some(native) = holds(expression, &item, &report) {
                assert_eq!(
                    Ok(native),
                    engine(expression, &item, &report),
                    "{expression}"
                );
                native_count += 1;
            }
        }
        // Most of the above is of a form written here; products of booleans, null and
        // strings, and those the engine computes in a wider integer, are not.
        assert!(
            native_count * 4 > expressions.len() * 3,
            "{native_count} of {}",
            expressions.len()
        );
    }

    /// Where the engine would refuse or decide otherwise, it is left to the engine.
    #[test]
    fn anything_else_is_left_to_the_engine() {
        let (item, report) = sample();
        for expression in [
            "item.missing",
            "item.missing is none",
            "item.nothing.deeper",
            "item.flag and item.flag",
            "not item.flag",
            "item.margin_mm / 2 < 1",
            "item.margin_mm + 1 > 1",
            "item.margin_mm - 1 > 1",
            "item.margin_mm ** 2 > 1",
            "2.5 * item.margin_mm > 1",
            "item.count_in_series * 2 is none",
            "item.margin_mm is none < 1",
            "item.big * item.big * item.big > 0",
            "item.word * 2 == 'ww'",
            "item.touch | selectattr('missing') | list | length > 0",
            "item.touch | selectattr('margin_ma', 'lt', -1) | list | length > 0",
            "item.touch | selectattr('margin_ma', 'odd') | list | length > 0",
            "item.touch | map(attribute='circuit') | join(', ')",
            "item.touch | list",
            "item.word | selectattr('x') | list | length > 0",
            "item.long | selectattr('n') | list | length > 0",
            "item.touch[0].flag",
            "item",
            "other.flag",
            "item.flag == 'x'",
            "item.flag or",
            "(item.flag)",
        ] {
            assert_eq!(holds(expression, &item, &report), None, "{expression}");
        }
        // `item` is undefined for a check over the whole report.
        assert_eq!(holds("item.flag", &Value::UNDEFINED, &report), None);
    }

    #[test]
    fn subjects_read_as_the_engine_writes_them() {
        let (item, report) = sample();
        for field in [
            "circuit",
            "rated_ac_v",
            "count_in_series",
            "nothing",
            "flag",
            "touch",
        ] {
            let expression = format!("item.{field}");
            let native = subject(&expression, &item, &report)
                .unwrap_or_else(|| panic!("not written natively: {expression}"));
            assert_eq!(
                Ok(native.unwrap_or_default()),
                engine_subject(&expression, &item),
                "{expression}"
            );
        }
        for expression in ["item.missing", "item.circuit | upper", "item", "'x'"] {
            assert_eq!(subject(expression, &item, &report), None, "{expression}");
        }
    }
}
