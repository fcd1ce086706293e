//! A raised finding's message written without the template engine when the message is
//! one of the simple forms the shipped checks use: text with fields (`{{ item.a.b }}`,
//! `{{ item.a | num }}`, `{{ (item.a / 1000) | num }}`, `report.` in place of `item.`),
//! `{% if TEST %}...{% else %}...{% endif %}` and
//! `{% for p in item.list if TEST %}...{% if not loop.last %}, {% endif %}{% endfor %}`,
//! where a test is a field (`p.flag`, `not p.flag`), a comparison with a quoted word
//! (`p.verdict == 'fail'`, `!=`), `is [not] number`, `is [not] none`, or `[not] loop.last`.
//! Compiling a message template is most of what a finding costs (about 45,000
//! instructions each). Anything else, another tag, filter or operator, or a field that is
//! not there, is left to minijinja, so every message reads as the engine writes it:
//! `tests/it/check_predicates.rs` holds the two equal on every finding of every fixture.

use minijinja::value::{Value, ValueKind};

/// The message, or `None` where the engine must write it.
pub fn render(template: &str, item: &Value, report: &Value) -> Option<String> {
    let nodes = parse(template)?;
    let mut out = String::with_capacity(template.len() + 16);
    let mut scope = Scope {
        item,
        report,
        loops: Vec::new(),
        iterations: 0,
    };
    write(&nodes, &mut scope, &mut out)?;
    Some(out)
}

/// Whether a message is of the form written here (whatever the values it will meet).
pub fn fits(template: &str) -> bool {
    parse(template).is_some()
}

/// The most items all the loops of one message go through natively. The engine counts
/// its work against a fuel allowance (`checks::CHECK_FUEL`); well below it, the two agree,
/// and a longer list is left to the engine, which decides.
const MAX_ITERATIONS: usize = 256;

enum Node<'a> {
    Text(&'a str),
    Field(Field<'a>),
    If {
        test: Test<'a>,
        then: Vec<Node<'a>>,
        otherwise: Vec<Node<'a>>,
    },
    For {
        var: &'a str,
        over: Path<'a>,
        filter: Option<Test<'a>>,
        body: Vec<Node<'a>>,
    },
}

/// `item.a.b`, `report.a`, or a loop's variable `p.a`.
struct Path<'a> {
    root: &'a str,
    names: Vec<&'a str>,
}

struct Field<'a> {
    path: Path<'a>,
    /// `(field / divisor)`: the engine's `/`, always a division of floats.
    divisor: Option<f64>,
    /// `| num`: the checks' number filter.
    num: bool,
}

/// A condition of an `if` tag or a loop's filter; `bool` is false where it reads `not`.
enum Test<'a> {
    Truthy(Path<'a>, bool),
    Equals(Path<'a>, &'a str, bool),
    IsNumber(Path<'a>, bool),
    IsNone(Path<'a>, bool),
    LoopLast(bool),
}

/// Where a block of the template ends.
#[derive(PartialEq)]
enum End {
    Template,
    Else,
    If,
    For,
}

fn parse(template: &str) -> Option<Vec<Node<'_>>> {
    // Comments are the engine's.
    if template.contains("{#") {
        return None;
    }
    // The engine drops one newline at the very end of a template.
    let mut rest = template
        .strip_suffix('\n')
        .map(|t| t.strip_suffix('\r').unwrap_or(t))
        .unwrap_or(template);
    let (nodes, end) = block(&mut rest, &mut Vec::new())?;
    (end == End::Template).then_some(nodes)
}

/// The nodes up to the end of the template or the next `else`, `endif` or `endfor`;
/// `vars` are the loop variables in force.
fn block<'a>(rest: &mut &'a str, vars: &mut Vec<&'a str>) -> Option<(Vec<Node<'a>>, End)> {
    let mut nodes = Vec::new();
    loop {
        let Some(open) = next_tag(rest) else {
            if !rest.is_empty() {
                nodes.push(Node::Text(rest));
            }
            *rest = "";
            return Some((nodes, End::Template));
        };
        if open > 0 {
            nodes.push(Node::Text(&rest[..open]));
        }
        let statement = rest[open..].starts_with("{%");
        let inside = &rest[open + 2..];
        let close = find_pair(inside, if statement { *b"%}" } else { *b"}}" })?;
        let tag = &inside[..close];
        *rest = &inside[close + 2..];
        // Whitespace control (`{{-`, `-%}`, `{%+`) is the engine's.
        if tag.starts_with(['-', '+']) || tag.ends_with(['-', '+']) {
            return None;
        }
        if !statement {
            nodes.push(Node::Field(field(tag, vars)?));
            continue;
        }
        let tag = tag.trim();
        let (keyword, tail) = tag.split_once(char::is_whitespace).unwrap_or((tag, ""));
        let tail = tail.trim();
        match (keyword, tail) {
            ("else", "") => return Some((nodes, End::Else)),
            ("endif", "") => return Some((nodes, End::If)),
            ("endfor", "") => return Some((nodes, End::For)),
            ("if", _) => {
                let test = test(tail, vars)?;
                let (then, end) = block(rest, vars)?;
                let otherwise = match end {
                    End::If => Vec::new(),
                    End::Else => {
                        let (otherwise, end) = block(rest, vars)?;
                        (end == End::If).then_some(otherwise)?
                    }
                    _ => return None,
                };
                nodes.push(Node::If {
                    test,
                    then,
                    otherwise,
                });
            }
            ("for", _) => {
                let (var, tail) = tail.split_once(char::is_whitespace)?;
                let tail = tail.trim_start().strip_prefix("in")?;
                if !tail.starts_with(char::is_whitespace) || !is_variable(var) {
                    return None;
                }
                let tail = tail.trim();
                let (over, filter) = match tail.split_once(char::is_whitespace) {
                    None => (tail, None),
                    Some((over, filter)) => (over, Some(filter.trim().strip_prefix("if")?)),
                };
                // The list is read outside the loop, its filter and body inside it.
                let over = path(over, vars)?;
                vars.push(var);
                let filter = match filter {
                    // `loop` is not defined in a loop's own filter.
                    Some(filter) if filter.starts_with(char::is_whitespace) => {
                        match test(filter.trim(), vars)? {
                            Test::LoopLast(_) => return None,
                            test => Some(test),
                        }
                    }
                    Some(_) => return None,
                    None => None,
                };
                let (body, end) = block(rest, vars)?;
                vars.pop();
                if end != End::For {
                    return None;
                }
                nodes.push(Node::For {
                    var,
                    over,
                    filter,
                    body,
                });
            }
            _ => return None,
        }
    }
}

/// Where the two ASCII bytes `pair` first stand in `text`: `text.find` of them, without
/// building a substring searcher for a two-byte word (a match of ASCII bytes always starts
/// a character; `tests::find_pair_is_find` compares the two).
fn find_pair(text: &str, pair: [u8; 2]) -> Option<usize> {
    let bytes = text.as_bytes();
    let mut from = 0;
    while let Some(i) = bytes.get(from..)?.iter().position(|&b| b == pair[0]) {
        let at = from + i;
        if bytes.get(at + 1) == Some(&pair[1]) {
            return Some(at);
        }
        from = at + 1;
    }
    None
}

/// Where the next `{{` or `{%` starts.
fn next_tag(text: &str) -> Option<usize> {
    let bytes = text.as_bytes();
    text.match_indices('{')
        .map(|(i, _)| i)
        .find(|&i| matches!(bytes.get(i + 1), Some(b'{' | b'%')))
}

/// A name the engine reads as a plain variable (not a keyword or a constant).
fn is_name(n: &str) -> bool {
    let mut bytes = n.bytes();
    bytes
        .next()
        .is_some_and(|b| b.is_ascii_alphabetic() || b == b'_')
        && bytes.all(|b| b.is_ascii_alphanumeric() || b == b'_')
}

/// A loop variable that shadows nothing this module reads and no word of the language.
fn is_variable(n: &str) -> bool {
    is_name(n)
        && !matches!(
            n,
            "item"
                | "report"
                | "loop"
                | "true"
                | "false"
                | "none"
                | "True"
                | "False"
                | "None"
                | "not"
                | "and"
                | "or"
                | "in"
                | "is"
                | "if"
                | "else"
                | "recursive"
                | "self"
                | "super"
                | "caller"
                | "varargs"
                | "kwargs"
        )
}

fn path<'a>(text: &'a str, vars: &[&'a str]) -> Option<Path<'a>> {
    let mut names = text.split('.');
    let root = names.next()?;
    if !(root == "item" || root == "report" || vars.contains(&root)) {
        return None;
    }
    let names: Vec<&str> = names.collect();
    // A loop variable may be printed whole; `item` and `report` only through a field.
    if (names.is_empty() && !vars.contains(&root)) || !names.iter().all(|n| is_name(n)) {
        return None;
    }
    Some(Path { root, names })
}

fn test<'a>(text: &'a str, vars: &[&'a str]) -> Option<Test<'a>> {
    let (positive, text) = match text.strip_prefix("not") {
        Some(t) if t.starts_with(char::is_whitespace) => (false, t.trim()),
        _ => (true, text),
    };
    if text == "loop.last" {
        return (!vars.is_empty()).then_some(Test::LoopLast(positive));
    }
    if !positive {
        // `not` before a comparison or an `is` test: left to the engine.
        return Some(Test::Truthy(path(text, vars)?, false));
    }
    for (op, equal) in [("==", true), ("!=", false)] {
        if let Some((left, word)) = text.split_once(op) {
            let word = word.trim();
            let inner = word
                .strip_prefix('\'')
                .and_then(|w| w.strip_suffix('\''))
                .or_else(|| word.strip_prefix('"').and_then(|w| w.strip_suffix('"')))?;
            if inner.contains(['\'', '"', '\\', '{', '}', '%', '=', '!']) {
                return None;
            }
            return Some(Test::Equals(path(left.trim(), vars)?, inner, equal));
        }
    }
    let words: Vec<&str> = text.split_whitespace().collect();
    match words[..] {
        [p] => Some(Test::Truthy(path(p, vars)?, true)),
        [p, "is", "number"] => Some(Test::IsNumber(path(p, vars)?, true)),
        [p, "is", "not", "number"] => Some(Test::IsNumber(path(p, vars)?, false)),
        [p, "is", "none"] => Some(Test::IsNone(path(p, vars)?, true)),
        [p, "is", "not", "none"] => Some(Test::IsNone(path(p, vars)?, false)),
        _ => None,
    }
}

fn field<'a>(expression: &'a str, vars: &[&'a str]) -> Option<Field<'a>> {
    let (value, num) = match expression.split_once('|') {
        Some((value, filter)) => (value, (filter.trim() == "num").then_some(true)?),
        None => (expression, false),
    };
    let value = value.trim();
    let (text, divisor) = match value.strip_prefix('(') {
        Some(inner) => {
            let (path, divisor) = inner.strip_suffix(')')?.split_once('/')?;
            let divisor = divisor.trim();
            // A whole number literal, which the engine reads as an integer: its value as a
            // float is exact up to 15 digits.
            if divisor.is_empty()
                || divisor.len() > 15
                || !divisor.bytes().all(|b| b.is_ascii_digit())
            {
                return None;
            }
            let divisor: f64 = divisor.parse().ok()?;
            if divisor == 0.0 {
                return None;
            }
            (path.trim(), Some(divisor))
        }
        None => (value, None),
    };
    Some(Field {
        path: path(text, vars)?,
        divisor,
        num,
    })
}

/// The values a message is written from: the check's item, the report, and the loops
/// open around the node being written (innermost last) with their position.
struct Scope<'v, 'a> {
    item: &'v Value,
    report: &'v Value,
    loops: Vec<Loop<'a>>,
    iterations: usize,
}

struct Loop<'a> {
    var: &'a str,
    value: Value,
    last: bool,
}

impl Scope<'_, '_> {
    /// The value at `path`, or `None` where the engine must decide (a name that is not
    /// there, which a strict engine reports).
    fn get(&self, path: &Path<'_>) -> Option<Value> {
        let mut value = match path.root {
            "item" => self.item.clone(),
            "report" => self.report.clone(),
            var => self
                .loops
                .iter()
                .rev()
                .find(|l| l.var == var)?
                .value
                .clone(),
        };
        if value.is_undefined() {
            return None;
        }
        for name in &path.names {
            value = value.get_attr(name).ok()?;
            if value.is_undefined() {
                return None;
            }
        }
        Some(value)
    }

    fn holds(&self, test: &Test<'_>) -> Option<bool> {
        Some(match test {
            Test::Truthy(p, positive) => self.get(p)?.is_true() == *positive,
            // The engine's `==` is the values' equality.
            Test::Equals(p, word, equal) => (self.get(p)? == Value::from(*word)) == *equal,
            // The engine's `number` test takes booleans too.
            Test::IsNumber(p, positive) => {
                matches!(self.get(p)?.kind(), ValueKind::Number | ValueKind::Bool) == *positive
            }
            Test::IsNone(p, positive) => self.get(p)?.is_none() == *positive,
            Test::LoopLast(positive) => self.loops.last()?.last == *positive,
        })
    }
}

fn write<'a>(nodes: &[Node<'a>], scope: &mut Scope<'_, 'a>, out: &mut String) -> Option<()> {
    for node in nodes {
        match node {
            Node::Text(text) => out.push_str(text),
            Node::Field(field) => out.push_str(&field.write(scope)?),
            Node::If {
                test,
                then,
                otherwise,
            } => {
                let branch = if scope.holds(test)? { then } else { otherwise };
                write(branch, scope, out)?;
            }
            Node::For {
                var,
                over,
                filter,
                body,
            } => {
                let list = scope.get(over)?;
                // A list only; anything else iterates as the engine decides.
                if list.kind() != ValueKind::Seq {
                    return None;
                }
                let len = list.len()?;
                scope.iterations += len;
                if scope.iterations > MAX_ITERATIONS {
                    return None;
                }
                // The filter first: `loop.last` counts the items it lets through.
                let mut kept = Vec::with_capacity(len);
                for value in list.try_iter().ok()? {
                    scope.loops.push(Loop {
                        var,
                        value,
                        last: false,
                    });
                    let keep = match filter {
                        Some(test) => scope.holds(test),
                        None => Some(true),
                    };
                    let Loop { value, .. } = scope.loops.pop()?;
                    if keep? {
                        kept.push(value);
                    }
                }
                let count = kept.len();
                for (index, value) in kept.into_iter().enumerate() {
                    scope.loops.push(Loop {
                        var,
                        value,
                        last: index + 1 == count,
                    });
                    let written = write(body, scope, out);
                    scope.loops.pop();
                    written?;
                }
            }
        }
    }
    Some(())
}

impl Field<'_> {
    /// The field as the engine prints it, or `None` where the engine must decide (a name
    /// that is not there, which a strict engine reports, or a division it refuses).
    fn write(&self, scope: &Scope<'_, '_>) -> Option<String> {
        let mut value = scope.get(&self.path)?;
        if let Some(divisor) = self.divisor {
            // The engine divides any number as a float (a whole number beyond 2^53 rounded
            // to one, as here); anything else is left to it.
            let x = f64::try_from(value).ok()?;
            value = Value::from(x / divisor);
        }
        Some(if self.num {
            crate::report::value_number(&value)
        } else {
            value.to_string()
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use minijinja::context;

    /// `find_pair` against `str::find` on every text of up to five pieces from a set with
    /// both bytes of each pair, lone halves, doubled ones and characters beyond ASCII.
    #[test]
    fn find_pair_is_find() {
        let pieces = [
            "%", "}", "{", "%}", "}}", "a", "é", "—", " ", "%%", "}%", "",
        ];
        let mut texts = vec![String::new()];
        for _ in 0..5 {
            let longer: Vec<String> = texts
                .iter()
                .flat_map(|t| pieces.iter().map(move |p| format!("{t}{p}")))
                .collect();
            texts.extend(longer);
            texts.sort();
            texts.dedup();
        }
        assert!(texts.len() > 50_000);
        for text in &texts {
            for (pair, word) in [(*b"%}", "%}"), (*b"}}", "}}")] {
                assert_eq!(find_pair(text, pair), text.find(word), "{text:?} {word}");
            }
        }
    }

    /// What the engine writes, set up as the checks set it up.
    fn engine(template: &str, item: &Value, report: &Value) -> Result<String, String> {
        let env = crate::checks::expression_environment();
        env.render_str(
            template,
            context! { item => item.clone(), report => report.clone() },
        )
        .map_err(|e| e.to_string())
    }

    fn sample() -> (Value, Value) {
        let item = Value::from(minijinja::value::Serde(serde_json::json!({
            "id": "pri-sec",
            "clearance_mm": 6.4,
            "whole": 3,
            "huge": 9_007_199_254_740_993u64,
            "frequency_hz": 23_215.1,
            "tiny": 1.0e-7,
            "negative": -0.25,
            "flag": true,
            "nothing": null,
            "list": [1, 2],
            "inner": { "layer": "top", "x_mm": 12.5 },
            "empty": "",
            "zero": 0.0,
            "points": [
                { "name": "a", "verdict": "fail", "frequency_hz": 195_000.0, "ok": false, "n": null, "tags": [] },
                { "name": "b", "verdict": "pass", "frequency_hz": 230_500.25, "ok": true, "n": 2, "tags": [1] },
                { "name": "c", "verdict": "fail", "frequency_hz": 1.0e6, "ok": true, "n": "x", "tags": [] },
                { "name": "d", "verdict": "fail", "frequency_hz": 0, "ok": 0, "n": 0.5, "tags": [2, 3] },
            ],
            "long": (0..300).collect::<Vec<u32>>(),
        })));
        let report = Value::from(minijinja::value::Serde(
            serde_json::json!({ "standard": "iec62368-1" }),
        ));
        (item, report)
    }

    /// Every form written here against the engine, on strings, floats, whole numbers,
    /// booleans, null, lists and nested fields.
    #[test]
    fn plain_messages_read_as_the_engine_writes_them() {
        let (item, report) = sample();
        let fields = [
            "id",
            "clearance_mm",
            "whole",
            "huge",
            "frequency_hz",
            "tiny",
            "negative",
            "flag",
            "nothing",
            "list",
            "inner",
            "inner.layer",
            "inner.x_mm",
        ];
        let mut compared = 0;
        for name in fields {
            for form in [
                format!("{{{{ item.{name} }}}}"),
                format!("{{{{ item.{name} | num }}}}"),
                format!("{{{{item.{name}|num}}}}"),
                format!("{{{{ (item.{name} / 1000) | num }}}}"),
                format!("{{{{ (item.{name} / 3) }}}}"),
            ] {
                let template = format!("a {form} b, {{{{ report.standard }}}} c\n");
                if let Some(native) = render(&template, &item, &report) {
                    assert_eq!(Ok(native), engine(&template, &item, &report), "{template}");
                    compared += 1;
                }
            }
        }
        assert!(compared >= 50, "only {compared} compared");
    }

    /// Where the engine would refuse or decide otherwise, it is left to the engine.
    #[test]
    fn anything_else_is_left_to_the_engine() {
        let (item, report) = sample();
        for template in [
            "{# note #}x",
            "{% if item.flag and item.whole %}x{% endif %}",
            "{% if item.flag or item.whole %}x{% endif %}",
            "{% if item.whole > 2 %}x{% endif %}",
            "{% if not item.id == 'pri-sec' %}x{% endif %}",
            "{% if item.flag %}x{% elif item.whole %}y{% endif %}",
            "{% if item.flag %}x",
            "{% if item.flag %}x{% endfor %}",
            "{% endif %}",
            "{%- if item.flag %}x{% endif %}",
            "{% if item.flag -%}x{% endif %}",
            "{% if item.missing %}x{% endif %}",
            "{% if item.missing == 'a' %}x{% endif %}",
            "{% if item.id == 'pri\\-sec' %}x{% endif %}",
            "{% if item.id == pri %}x{% endif %}",
            "{% if loop.last %}x{% endif %}",
            "{{ loop.last }}",
            "{% set x = 1 %}{{ x }}",
            "{% for p in item.points %}x{% else %}e{% endfor %}",
            "{% for p in item.points if loop.last %}x{% endfor %}",
            "{% for p in item.points recursive %}x{% endfor %}",
            "{% for item in item.points %}x{% endfor %}",
            "{% for loop in item.points %}x{% endfor %}",
            "{% for p, q in item.points %}x{% endfor %}",
            "{% for p in item.id %}x{% endfor %}",
            "{% for p in item.inner %}x{% endfor %}",
            "{% for p in item.missing %}x{% endfor %}",
            "{% for p in item.long %}x{% endfor %}",
            "{% for p in item.points %}{{ p.missing }}{% endfor %}",
            "{% for p in item.points %}x{% endfor %}{{ p.name }}",
            "{% for p in item.points %}{{ p.name | upper }}{% endfor %}",
            "{{ item.id | upper }}",
            "{{ item.id | num | upper }}",
            "{{- item.id }}",
            "{{ item.id -}}",
            "{{ item.clearance_mm * 2 }}",
            "{{ (item.clearance_mm / 0) | num }}",
            "{{ (item.clearance_mm / 2.5) | num }}",
            "{{ (item.id / 1000) | num }}",
            "{{ item.missing }}",
            "{{ item.nothing.deeper }}",
            "{{ item }}",
            "{{ other.id }}",
            "{{ item.list[0] }}",
            "{{ item.id ",
        ] {
            assert_eq!(render(template, &item, &report), None, "{template}");
        }
        // `item` is undefined for a check over the whole report.
        assert_eq!(render("{{ item.id }}", &Value::UNDEFINED, &report), None);
    }

    /// `if` and `for` tags against the engine: every test form on strings, numbers,
    /// booleans, null and lists, loops filtered and not, nested, with `loop.last`.
    #[test]
    fn tags_read_as_the_engine_writes_them() {
        let (item, report) = sample();
        let tests = [
            "{}",
            "not {}",
            "{} == 'top'",
            "{} == \"fail\"",
            "{} != 'fail'",
            "{} == '3'",
            "{} is number",
            "{} is not number",
            "{} is none",
            "{} is not none",
        ];
        let fields = [
            "item.id",
            "item.flag",
            "item.whole",
            "item.zero",
            "item.empty",
            "item.nothing",
            "item.list",
            "item.inner",
            "item.inner.layer",
            "report.standard",
        ];
        let loop_fields = [
            "p.name",
            "p.verdict",
            "p.frequency_hz",
            "p.ok",
            "p.n",
            "p.tags",
            "p",
        ];
        let mut templates = Vec::new();
        for test in tests {
            for field in fields {
                let test = test.replace("{}", field);
                templates.push(format!("a {{% if {test} %}}yes{{% endif %}} b"));
                templates.push(format!(
                    "{{% if {test} %}}yes{{% else %}}no {{{{ item.id }}}}{{% endif %}}"
                ));
            }
            for field in loop_fields {
                let test = test.replace("{}", field);
                templates.push(format!(
                    "at {{% for p in item.points if {test} %}}{{{{ (p.frequency_hz / 1000) | num }}}} kHz ({{{{ p.name }}}}){{% if not loop.last %}}, {{% endif %}}{{% endfor %}}."
                ));
                templates.push(format!(
                    "{{% for p in item.points %}}{{% if {test} %}}{{{{ p.name }}}}{{% else %}}-{{% endif %}}{{% if loop.last %}}.{{% endif %}}{{% endfor %}}"
                ));
            }
        }
        templates.extend([
            "{% for p in item.points %}{% for q in item.points if q.verdict != 'pass' %}{{ p.name }}{{ q.name }}{% if not loop.last %} {% endif %}{% endfor %}{% if not loop.last %}; {% endif %}{% endfor %}".to_string(),
            "{% for p in item.list %}{{ p }}{% endfor %}{% for p in item.points if p.name == 'z' %}never{% endfor %}".to_string(),
            "{%for p in item.points if p.ok%}{{p.name|num}}{%endfor%}\n".to_string(),
        ]);
        for template in &templates {
            let native = render(template, &item, &report)
                .unwrap_or_else(|| panic!("not written natively: {template}"));
            assert_eq!(Ok(native), engine(template, &item, &report), "{template}");
        }
        assert!(templates.len() > 250);
    }

    #[test]
    fn text_without_fields_is_itself() {
        let (item, report) = sample();
        assert_eq!(
            render("no fields } here {", &item, &report).as_deref(),
            Some("no fields } here {")
        );
        assert!(fits("a {{ item.x | num }} b"));
        assert!(!fits("a {% if x %}b{% endif %}"));
        assert!(fits("a {% if item.x %}b{% endif %}"));
    }
}
