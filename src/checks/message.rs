//! A raised finding's message written without the template engine when the message is
//! plain text with fields: `{{ item.a.b }}`, `{{ item.a | num }}` or
//! `{{ (item.a / 1000) | num }}` (`report.` in place of `item.` too). Compiling a message
//! template is most of what a finding costs (about 45,000 instructions each); two thirds of
//! the shipped messages are of this form. Anything else, a tag, another filter or
//! operator, or a field that is not there, is left to minijinja, so every message reads as
//! the engine writes it: `tests/it/check_predicates.rs` holds the two equal on every
//! finding of every fixture.

use minijinja::value::Value;

/// The message, or `None` where the engine must write it.
pub fn render(template: &str, item: &Value, report: &Value) -> Option<String> {
    let parts = parse(template)?;
    let mut out = String::with_capacity(template.len() + 16);
    for part in parts {
        match part {
            Part::Text(text) => out.push_str(text),
            Part::Field(field) => out.push_str(&field.write(item, report)?),
        }
    }
    Some(out)
}

/// Whether a message is of the form written here (whatever the values it will meet).
pub fn fits(template: &str) -> bool {
    parse(template).is_some()
}

enum Part<'a> {
    Text(&'a str),
    Field(Field<'a>),
}

struct Field<'a> {
    /// `item` (false) or `report` (true), then the names looked up one after another.
    from_report: bool,
    names: Vec<&'a str>,
    /// `(field / divisor)`: the engine's `/`, always a division of floats.
    divisor: Option<f64>,
    /// `| num`: the checks' number filter.
    num: bool,
}

fn parse(template: &str) -> Option<Vec<Part<'_>>> {
    // Tags and comments are the engine's; so is whitespace control (`{{-`, `-}}`).
    if template.contains("{%") || template.contains("{#") {
        return None;
    }
    // The engine drops one newline at the very end of a template.
    let template = template
        .strip_suffix('\n')
        .map(|t| t.strip_suffix('\r').unwrap_or(t))
        .unwrap_or(template);
    let mut parts = Vec::new();
    let mut rest = template;
    while let Some(open) = rest.find("{{") {
        if open > 0 {
            parts.push(Part::Text(&rest[..open]));
        }
        let inside = &rest[open + 2..];
        let close = inside.find("}}")?;
        parts.push(Part::Field(field(&inside[..close])?));
        rest = &inside[close + 2..];
    }
    if !rest.is_empty() {
        parts.push(Part::Text(rest));
    }
    Some(parts)
}

fn field(expression: &str) -> Option<Field<'_>> {
    if expression.starts_with(['-', '+']) || expression.ends_with(['-', '+']) {
        return None;
    }
    let (value, num) = match expression.split_once('|') {
        Some((value, filter)) => (value, (filter.trim() == "num").then_some(true)?),
        None => (expression, false),
    };
    let value = value.trim();
    let (path, divisor) = match value.strip_prefix('(') {
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
    let mut names = path.split('.');
    let from_report = match names.next()? {
        "item" => false,
        "report" => true,
        _ => return None,
    };
    let names: Vec<&str> = names.collect();
    let is_name = |n: &&str| {
        let mut bytes = n.bytes();
        bytes
            .next()
            .is_some_and(|b| b.is_ascii_alphabetic() || b == b'_')
            && bytes.all(|b| b.is_ascii_alphanumeric() || b == b'_')
    };
    if names.is_empty() || !names.iter().all(is_name) {
        return None;
    }
    Some(Field {
        from_report,
        names,
        divisor,
        num,
    })
}

impl Field<'_> {
    /// The field as the engine prints it, or `None` where the engine must decide (a name
    /// that is not there, which a strict engine reports, or a division it refuses).
    fn write(&self, item: &Value, report: &Value) -> Option<String> {
        let mut value = if self.from_report { report } else { item }.clone();
        for name in &self.names {
            value = value.get_attr(name).ok()?;
            if value.is_undefined() {
                return None;
            }
        }
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
            "{% if item.flag %}x{% endif %}",
            "{# note #}x",
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

    #[test]
    fn text_without_fields_is_itself() {
        let (item, report) = sample();
        assert_eq!(
            render("no fields } here {", &item, &report).as_deref(),
            Some("no fields } here {")
        );
        assert!(fits("a {{ item.x | num }} b"));
        assert!(!fits("a {% if x %}b{% endif %}"));
    }
}
