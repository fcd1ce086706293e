//! Aperture macros (`%AM...*%`): their parsing, their arithmetic and the shapes their
//! primitives draw, after the Gerber Layer Format Specification (Ucamco, revision 2023.08,
//! the aperture macro command AM; written from memory of it, verify against the published
//! copy).
//!
//! A macro is parsed once where it is defined (so a malformed expression is refused at its own
//! line even if no aperture uses it) and instantiated once per `%AD` that names it, with the
//! aperture's parameters as `$1`, `$2`, ...: the result is a handful of shapes at the macro's
//! origin, in millimetres, which every flash of the aperture translates.

use std::collections::BTreeMap;

use super::super::geometry::{self as g, P, Seg};
use super::{Shape, err};
use crate::diag::Diagnostic;

/// Nesting of parentheses and signs beyond this is refused, and so is a modifier of more
/// operators: the expression is a tree evaluated recursively, and a hostile file must not
/// overflow the stack.
const MAX_DEPTH: usize = 64;
const MAX_OPERATORS: usize = 1000;

/// One parsed macro.
#[derive(Debug, Clone)]
pub struct Macro {
    pub name: String,
    pub line: usize,
    body: Vec<Stmt>,
}

#[derive(Debug, Clone)]
enum Stmt {
    /// `$n=expression`: a variable defined (or redefined) for the statements after it.
    Assign { var: u32, expr: Expr, line: usize },
    /// `code,expression,...`: a primitive with its modifiers.
    Primitive {
        code: u32,
        args: Vec<Expr>,
        line: usize,
    },
}

#[derive(Debug, Clone, Copy)]
enum Op {
    Add,
    Sub,
    Mul,
    Div,
}

#[derive(Debug, Clone)]
enum Expr {
    Num(f64),
    Var(u32),
    Neg(Box<Expr>),
    Bin(Op, Box<Expr>, Box<Expr>),
}

impl Expr {
    fn eval(&self, vars: &BTreeMap<u32, f64>) -> Result<f64, String> {
        Ok(match self {
            Expr::Num(v) => *v,
            Expr::Var(n) => *vars
                .get(n)
                .ok_or_else(|| format!("variable ${n} is not defined"))?,
            Expr::Neg(e) => -e.eval(vars)?,
            Expr::Bin(op, a, b) => {
                let (a, b) = (a.eval(vars)?, b.eval(vars)?);
                match op {
                    Op::Add => a + b,
                    Op::Sub => a - b,
                    Op::Mul => a * b,
                    Op::Div => {
                        if b == 0.0 {
                            return Err("division by zero".into());
                        }
                        a / b
                    }
                }
            }
        })
    }
}

/// Recursive descent over one modifier, with the specification's precedence: `x` and `/`
/// bind tighter than `+` and `-`, unary `+`/`-` tighter still, parentheses group.
struct ExprParser<'a> {
    s: &'a [u8],
    pos: usize,
    depth: usize,
    operators: usize,
}

impl ExprParser<'_> {
    fn parse(text: &str) -> Result<Expr, String> {
        if text.is_empty() {
            return Err("an empty modifier".into());
        }
        let mut p = ExprParser {
            s: text.as_bytes(),
            pos: 0,
            depth: 0,
            operators: 0,
        };
        let e = p.sum()?;
        if p.pos < p.s.len() {
            return Err(format!(
                "unexpected \"{}\" at character {}",
                p.s[p.pos] as char,
                p.pos + 1
            ));
        }
        Ok(e)
    }

    fn peek(&self) -> Option<u8> {
        self.s.get(self.pos).copied()
    }

    fn operator(&mut self) -> Result<(), String> {
        self.pos += 1;
        self.operators += 1;
        if self.operators > MAX_OPERATORS {
            return Err(format!("more than {MAX_OPERATORS} operators"));
        }
        Ok(())
    }

    fn sum(&mut self) -> Result<Expr, String> {
        let mut left = self.product()?;
        while let Some(c @ (b'+' | b'-')) = self.peek() {
            self.operator()?;
            let right = self.product()?;
            let op = if c == b'+' { Op::Add } else { Op::Sub };
            left = Expr::Bin(op, Box::new(left), Box::new(right));
        }
        Ok(left)
    }

    fn product(&mut self) -> Result<Expr, String> {
        let mut left = self.unary()?;
        // The specification writes multiplication as a lowercase `x`; an uppercase `X` has no
        // other meaning inside a macro body, so it is read the same way.
        while let Some(c @ (b'x' | b'X' | b'/')) = self.peek() {
            self.operator()?;
            let right = self.unary()?;
            let op = if c == b'/' { Op::Div } else { Op::Mul };
            left = Expr::Bin(op, Box::new(left), Box::new(right));
        }
        Ok(left)
    }

    fn unary(&mut self) -> Result<Expr, String> {
        self.depth += 1;
        if self.depth > MAX_DEPTH {
            return Err(format!("nested deeper than {MAX_DEPTH} levels"));
        }
        let e = match self.peek() {
            Some(b'-') => {
                self.pos += 1;
                Expr::Neg(Box::new(self.unary()?))
            }
            Some(b'+') => {
                self.pos += 1;
                self.unary()?
            }
            _ => self.atom()?,
        };
        self.depth -= 1;
        Ok(e)
    }

    fn atom(&mut self) -> Result<Expr, String> {
        match self.peek() {
            Some(b'(') => {
                self.pos += 1;
                let e = self.sum()?;
                if self.peek() != Some(b')') {
                    return Err("a \"(\" is not closed".into());
                }
                self.pos += 1;
                Ok(e)
            }
            Some(b'$') => {
                self.pos += 1;
                let start = self.pos;
                while self.peek().is_some_and(|c| c.is_ascii_digit()) {
                    self.pos += 1;
                }
                let digits = std::str::from_utf8(&self.s[start..self.pos]).unwrap_or("");
                match digits.parse::<u32>() {
                    Ok(n) if n >= 1 => Ok(Expr::Var(n)),
                    _ => Err("a \"$\" not followed by a variable number from 1".into()),
                }
            }
            Some(c) if c.is_ascii_digit() || c == b'.' => {
                let start = self.pos;
                while self.peek().is_some_and(|c| c.is_ascii_digit() || c == b'.') {
                    self.pos += 1;
                }
                let text = std::str::from_utf8(&self.s[start..self.pos]).unwrap_or("");
                text.parse::<f64>()
                    .ok()
                    .filter(|v| v.is_finite())
                    .map(Expr::Num)
                    .ok_or_else(|| format!("\"{text}\" is not a number"))
            }
            Some(c) => Err(format!(
                "unexpected \"{}\" at character {}",
                c as char,
                self.pos + 1
            )),
            None => Err("the expression ends where a number, variable or \"(\" is expected".into()),
        }
    }
}

fn primitive_name(code: u32) -> &'static str {
    match code {
        1 => "circle (1)",
        2 => "vector line (2)",
        20 => "vector line (20)",
        21 => "center line (21)",
        22 => "lower left line (22)",
        4 => "outline (4)",
        5 => "polygon (5)",
        7 => "thermal (7)",
        _ => "primitive",
    }
}

/// Parses `AMname*block*block*...` (the `%` stripped, line breaks kept so that each block
/// is named by its own line).
pub fn parse(file: &str, start_line: usize, body: &str) -> Result<Macro, Diagnostic> {
    let mut blocks: Vec<(usize, String)> = Vec::new();
    let mut line = start_line;
    let mut cur = String::new();
    let mut cur_line = None;
    for c in body.chars() {
        match c {
            '*' => {
                blocks.push((cur_line.unwrap_or(line), std::mem::take(&mut cur)));
                cur_line = None;
            }
            '\n' => {
                line += 1;
                if cur_line.is_some() {
                    cur.push(' ');
                }
            }
            c => {
                if cur_line.is_none() && !c.is_whitespace() {
                    cur_line = Some(line);
                }
                if cur_line.is_some() {
                    cur.push(c);
                }
            }
        }
    }
    if let Some(l) = cur_line {
        return Err(err(
            file,
            l,
            format!(
                "aperture macro: \"{}\" is not ended by \"*\" before the closing \"%\"",
                cur.trim()
            ),
        ));
    }
    let mut blocks = blocks.into_iter();
    let (name_line, head) = blocks.next().unwrap_or((start_line, String::new()));
    let name = head
        .trim()
        .strip_prefix("AM")
        .unwrap_or("")
        .trim()
        .to_string();
    let valid_name = name
        .chars()
        .next()
        .is_some_and(|c| c.is_ascii_alphabetic() || "_.$".contains(c))
        && name
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || "_.$".contains(c));
    if !valid_name {
        return Err(err(
            file,
            name_line,
            format!(
                "aperture macro name \"{name}\" is not valid: a letter, \"_\", \".\" or \"$\" \
                 followed by letters, digits, \"_\", \".\" or \"$\""
            ),
        ));
    }
    if matches!(name.as_str(), "C" | "R" | "O" | "P") {
        return Err(err(
            file,
            name_line,
            format!("aperture macro name \"{name}\" is the name of a standard aperture"),
        ));
    }
    let mut body = Vec::new();
    for (line, block) in blocks {
        let block = block.trim();
        if block.is_empty() {
            continue;
        }
        let bad = |what: String| {
            err(
                file,
                line,
                format!("aperture macro {name}: {what} in \"{block}\""),
            )
        };
        // Comment primitive: code 0, a space and any text.
        if block == "0" || block.starts_with("0 ") || block.starts_with("0\t") {
            continue;
        }
        let compact: String = block.chars().filter(|c| !c.is_whitespace()).collect();
        if let Some(rest) = compact.strip_prefix('$') {
            let Some((var, expr)) = rest.split_once('=') else {
                return Err(bad("a variable definition without \"=\"".into()));
            };
            let var = var
                .parse::<u32>()
                .ok()
                .filter(|n| *n >= 1)
                .ok_or_else(|| bad(format!("\"${var}\" is not a variable ($1, $2, ...)")))?;
            let expr = ExprParser::parse(expr)
                .map_err(|e| bad(format!("the expression \"{expr}\" is malformed: {e}")))?;
            body.push(Stmt::Assign { var, expr, line });
            continue;
        }
        let mut fields = compact.split(',');
        let code_text = fields.next().unwrap_or("");
        let code = code_text.parse::<u32>().map_err(|_| {
            bad(format!(
                "\"{code_text}\" is not a primitive code (0, 1, 20, 21, 4, 5, 7) or a variable definition"
            ))
        })?;
        match code {
            1 | 2 | 20 | 21 | 22 | 4 | 5 | 7 => {}
            6 => {
                return Err(err(
                    file,
                    line,
                    format!(
                        "aperture macro {name}: the moire primitive (6) is deprecated by the Gerber \
                         specification and not interpreted; write the target as circles (1) with \
                         exposure off for the rings and center lines (21) for the cross hair, or \
                         leave it out of the copper and drill files"
                    ),
                ));
            }
            other => {
                return Err(bad(format!(
                    "primitive code {other} is not one of the specification's (0 comment, 1 circle, \
                     20 vector line, 21 center line, 4 outline, 5 polygon, 7 thermal)"
                )));
            }
        }
        let args = fields
            .enumerate()
            .map(|(k, f)| {
                ExprParser::parse(f).map_err(|e| {
                    bad(format!(
                        "modifier {} (\"{f}\") of the {} is malformed: {e}",
                        k + 1,
                        primitive_name(code)
                    ))
                })
            })
            .collect::<Result<Vec<_>, _>>()?;
        let fixed = match code {
            1 => Some(4..=5),
            2 | 20 => Some(7..=7),
            21 | 22 | 5 => Some(6..=6),
            7 => Some(6..=6),
            _ => None,
        };
        if let Some(range) = fixed
            && !range.contains(&args.len())
        {
            return Err(bad(format!(
                "the {} takes {} modifiers, not {}",
                primitive_name(code),
                if range.start() == range.end() {
                    range.start().to_string()
                } else {
                    format!("{} or {}", range.start(), range.end())
                },
                args.len()
            )));
        }
        if code == 4 && args.len() < 2 {
            return Err(bad("the outline (4) lacks its vertex count".into()));
        }
        body.push(Stmt::Primitive { code, args, line });
    }
    Ok(Macro {
        name,
        line: name_line,
        body,
    })
}

/// What one primitive draws, in millimetres at the macro's origin.
enum Drawn {
    Circle(P, f64),
    Ring(Vec<P>),
    Area(geo::MultiPolygon<f64>),
}

/// Rotation about the macro's origin, counter-clockwise in degrees; quarter turns exact.
fn rotate(p: P, deg: f64) -> P {
    let (s, c) = if deg.rem_euclid(90.0) == 0.0 {
        match (deg.rem_euclid(360.0) / 90.0) as u32 {
            0 => (0.0, 1.0),
            1 => (1.0, 0.0),
            2 => (0.0, -1.0),
            _ => (-1.0, 0.0),
        }
    } else {
        deg.to_radians().sin_cos()
    };
    [p[0] * c - p[1] * s, p[0] * s + p[1] * c]
}

fn ls(ring: &[P]) -> geo::LineString<f64> {
    geo::LineString::from(ring.iter().map(|p| (p[0], p[1])).collect::<Vec<_>>())
}

fn poly(ring: &[P]) -> geo::MultiPolygon<f64> {
    geo::MultiPolygon::new(vec![geo::Polygon::new(ls(ring), vec![])])
}

fn rings_of(p: &geo::Polygon<f64>) -> Vec<Vec<P>> {
    let ring = |l: &geo::LineString<f64>| -> Vec<P> {
        let mut v: Vec<P> = l.0.iter().map(|c| [c.x, c.y]).collect();
        if v.len() > 1 && v.first() == v.last() {
            v.pop();
        }
        v
    };
    let mut out = vec![ring(p.exterior())];
    out.extend(p.interiors().iter().map(ring));
    out
}

impl Macro {
    /// The shapes the macro draws for one aperture definition (`code`, at `ad_line`) with its
    /// parameters; `to_mm` turns the file's unit into millimetres.
    pub fn instantiate(
        &self,
        file: &str,
        ad_line: usize,
        code: u32,
        params: &[f64],
        to_mm: f64,
    ) -> Result<Vec<Shape>, Diagnostic> {
        use geo::BooleanOps;
        let mut vars: BTreeMap<u32, f64> = params
            .iter()
            .enumerate()
            .map(|(k, v)| (k as u32 + 1, *v))
            .collect();
        let given = params.len();
        let mut drawn: Vec<(bool, Drawn)> = Vec::new();
        for stmt in &self.body {
            let line = match stmt {
                Stmt::Assign { line, .. } | Stmt::Primitive { line, .. } => *line,
            };
            let fail = |what: String| {
                err(
                    file,
                    line,
                    format!(
                        "aperture macro {} (used by aperture D{code} at line {ad_line}, which \
                         gives {}): {what}",
                        self.name,
                        match given {
                            0 => "no parameters".to_string(),
                            1 => "1 parameter, $1".to_string(),
                            n => format!("{n} parameters, $1 to ${n}"),
                        }
                    ),
                )
            };
            match stmt {
                Stmt::Assign { var, expr, .. } => {
                    let v = expr.eval(&vars).map_err(&fail)?;
                    if !v.is_finite() {
                        return Err(fail(format!("${var} is not a finite number")));
                    }
                    vars.insert(*var, v);
                }
                Stmt::Primitive {
                    code: prim, args, ..
                } => {
                    let a = args
                        .iter()
                        .map(|e| {
                            e.eval(&vars).and_then(|v| {
                                if v.is_finite() {
                                    Ok(v)
                                } else {
                                    Err("a modifier is not a finite number".into())
                                }
                            })
                        })
                        .collect::<Result<Vec<f64>, String>>()
                        .map_err(&fail)?;
                    let shape = primitive(*prim, &a, to_mm).map_err(&fail)?;
                    drawn.push(shape);
                }
            }
        }
        let mut shapes = Vec::new();
        if drawn.iter().all(|(on, _)| *on) {
            // All exposure on: the union of the primitives is their overlap as separate shapes
            // (circles stay exact circles).
            for (_, d) in drawn {
                match d {
                    Drawn::Circle(c, r) => shapes.push(Shape::Segs(vec![Seg { a: c, b: c, r }])),
                    Drawn::Ring(ring) => shapes.push(Shape::Rings(vec![ring])),
                    Drawn::Area(m) => shapes.extend(m.0.iter().map(|p| Shape::Rings(rings_of(p)))),
                }
            }
        } else {
            // Exposure off erases what the macro's earlier primitives drew (only those: the
            // image beneath a flash is not touched), so the primitives are combined in order.
            let mut acc = geo::MultiPolygon::<f64>::new(vec![]);
            for (on, d) in drawn {
                let m = match d {
                    Drawn::Circle(c, r) => poly(&g::circle_ring(c, r)),
                    Drawn::Ring(ring) => poly(&ring),
                    Drawn::Area(m) => m,
                };
                acc = if on {
                    if acc.0.is_empty() { m } else { acc.union(&m) }
                } else if acc.0.is_empty() {
                    acc
                } else {
                    acc.difference(&m)
                };
            }
            shapes.extend(acc.0.iter().map(|p| Shape::Rings(rings_of(p))));
        }
        shapes.retain(|s| match s {
            Shape::Rings(r) => r.first().is_some_and(|r| r.len() >= 3),
            Shape::Segs(s) => !s.is_empty(),
        });
        Ok(merge_overlapping(shapes))
    }
}

/// One pad is one conductor: primitives whose boxes touch are merged into the shape they
/// make together (once per aperture definition, not per flash); a primitive that touches no
/// other stays as it is, so a lone circle keeps its exact outline.
fn merge_overlapping(shapes: Vec<Shape>) -> Vec<Shape> {
    let n = shapes.len();
    if n < 2 {
        return shapes;
    }
    let boxes: Vec<g::Bbox> = shapes.iter().map(Shape::bbox).collect();
    let mut group: Vec<usize> = (0..n).collect();
    fn root(group: &mut [usize], mut i: usize) -> usize {
        while group[i] != i {
            group[i] = group[group[i]];
            i = group[i];
        }
        i
    }
    for i in 0..n {
        for j in i + 1..n {
            if boxes[i].gap(&boxes[j]) <= 0.0 {
                let (a, b) = (root(&mut group, i), root(&mut group, j));
                group[a] = b;
            }
        }
    }
    let mut members: BTreeMap<usize, Vec<Shape>> = BTreeMap::new();
    for (i, s) in shapes.into_iter().enumerate() {
        let r = root(&mut group, i);
        members.entry(r).or_default().push(s);
    }
    members
        .into_values()
        .flat_map(|m| if m.len() == 1 { m } else { merged(&m) })
        .collect()
}

/// The union of shapes as polygons (circles as their inscribed chords).
pub fn merged(shapes: &[Shape]) -> Vec<Shape> {
    use geo::BooleanOps;
    let mut acc = geo::MultiPolygon::<f64>::new(vec![]);
    for s in shapes {
        let parts: Vec<geo::MultiPolygon<f64>> = match s {
            Shape::Segs(segs) => segs.iter().map(|s| poly(&g::stadium_ring(s))).collect(),
            Shape::Rings(rings) => match rings.split_first() {
                Some((outer, holes)) => vec![geo::MultiPolygon::new(vec![geo::Polygon::new(
                    ls(outer),
                    holes.iter().map(|h| ls(h)).collect(),
                )])],
                None => vec![],
            },
        };
        for m in parts {
            acc = if acc.0.is_empty() { m } else { acc.union(&m) };
        }
    }
    acc.0.iter().map(|p| Shape::Rings(rings_of(p))).collect()
}

fn exposure(v: f64, name: &str) -> Result<bool, String> {
    match v {
        0.0 => Ok(false),
        1.0 => Ok(true),
        _ => Err(format!(
            "the {name}'s exposure is {v}: it must be 1 (on) or 0 (off)"
        )),
    }
}

fn non_negative(v: f64, what: &str, name: &str) -> Result<f64, String> {
    if v < 0.0 {
        Err(format!("the {name}'s {what} is negative ({v})"))
    } else {
        Ok(v)
    }
}

/// One primitive's shape from its evaluated modifiers (counts were checked when parsed, except
/// the outline's, which depends on its vertex count).
fn primitive(code: u32, a: &[f64], k: f64) -> Result<(bool, Drawn), String> {
    let name = primitive_name(code);
    let pt = |x: f64, y: f64| [x * k, y * k];
    let get = |i: usize| a.get(i).copied().unwrap_or(0.0);
    let rect = |corners: [P; 4], rot: f64| -> Drawn {
        Drawn::Ring(corners.iter().map(|p| rotate(*p, rot)).collect())
    };
    match code {
        1 => {
            let on = exposure(get(0), name)?;
            let d = non_negative(get(1), "diameter", name)? * k;
            let c = rotate(pt(get(2), get(3)), get(4));
            Ok((on, Drawn::Circle(c, d / 2.0)))
        }
        2 | 20 => {
            let on = exposure(get(0), name)?;
            let w = non_negative(get(1), "width", name)? * k;
            let (s, e) = (pt(get(2), get(3)), pt(get(4), get(5)));
            let len = g::dist(s, e);
            if len == 0.0 || w == 0.0 {
                return Ok((on, Drawn::Ring(vec![])));
            }
            // The line's ends are square and do not extend beyond its end points.
            let n = g::scale([-(e[1] - s[1]) / len, (e[0] - s[0]) / len], w / 2.0);
            let corners = [g::add(s, n), g::sub(s, n), g::sub(e, n), g::add(e, n)];
            Ok((on, rect(corners, get(6))))
        }
        21 | 22 => {
            let on = exposure(get(0), name)?;
            let w = non_negative(get(1), "width", name)? * k;
            let h = non_negative(get(2), "height", name)? * k;
            let p = pt(get(3), get(4));
            // 21 gives the centre, the deprecated 22 the lower left corner.
            let ll = if code == 21 {
                [p[0] - w / 2.0, p[1] - h / 2.0]
            } else {
                p
            };
            let corners = [
                ll,
                [ll[0] + w, ll[1]],
                [ll[0] + w, ll[1] + h],
                [ll[0], ll[1] + h],
            ];
            Ok((on, rect(corners, get(5))))
        }
        4 => {
            let on = exposure(get(0), name)?;
            let n = get(1);
            if n < 3.0 || n.fract() != 0.0 || n > 1.0e6 {
                return Err(format!(
                    "the outline's vertex count is {n}: a whole number from 3"
                ));
            }
            let n = n as usize;
            let want = 2 + 2 * (n + 1) + 1;
            if a.len() != want {
                return Err(format!(
                    "the outline (4) with {n} vertices takes {want} modifiers (exposure, count, \
                     {} coordinate pairs with the first repeated at the end, rotation), not {}",
                    n + 1,
                    a.len()
                ));
            }
            let rot = a[want - 1];
            let mut ring: Vec<P> = (0..=n).map(|i| pt(a[2 + 2 * i], a[3 + 2 * i])).collect();
            let (first, last) = (ring[0], ring[n]);
            if g::dist(first, last) > 1e-9 * (1.0 + first[0].abs() + first[1].abs()) {
                return Err(format!(
                    "the outline is not closed: its last point ({}, {}) is not its first ({}, {})",
                    a[2 + 2 * n],
                    a[3 + 2 * n],
                    a[2],
                    a[3]
                ));
            }
            ring.pop();
            Ok((
                on,
                Drawn::Ring(ring.iter().map(|p| rotate(*p, rot)).collect()),
            ))
        }
        5 => {
            let on = exposure(get(0), name)?;
            let n = get(1);
            if !(3.0..=12.0).contains(&n) || n.fract() != 0.0 {
                return Err(format!(
                    "the polygon's vertex count is {n}: a whole number from 3 to 12"
                ));
            }
            let c = pt(get(2), get(3));
            let r = non_negative(get(4), "diameter", name)? * k / 2.0;
            // The first vertex lies on the positive x axis through the centre before rotation.
            let ring = (0..n as u32)
                .map(|i| {
                    let t = std::f64::consts::TAU * i as f64 / n;
                    rotate([c[0] + r * t.cos(), c[1] + r * t.sin()], get(5))
                })
                .collect();
            Ok((on, Drawn::Ring(ring)))
        }
        7 => {
            use geo::BooleanOps;
            let c = pt(get(0), get(1));
            let (outer, inner, gap) = (get(2) * k, get(3) * k, get(4) * k);
            if !(outer > inner && inner >= 0.0) {
                return Err(format!(
                    "the thermal's outer diameter ({}) must exceed its inner diameter ({}), which \
                     must not be negative",
                    get(2),
                    get(3)
                ));
            }
            if !(gap >= 0.0 && gap < outer / std::f64::consts::SQRT_2) {
                return Err(format!(
                    "the thermal's gap ({}) must be from 0 and less than its outer diameter / \
                     sqrt(2) ({:.6}), or nothing of the ring is left",
                    get(4),
                    get(2) / std::f64::consts::SQRT_2
                ));
            }
            let holes = if inner > 0.0 {
                vec![ls(&g::circle_ring(c, inner / 2.0))]
            } else {
                vec![]
            };
            let mut ring = geo::MultiPolygon::new(vec![geo::Polygon::new(
                ls(&g::circle_ring(c, outer / 2.0)),
                holes,
            )]);
            if gap > 0.0 {
                // Two bars of the gap's width through the centre, along x and y, cut the ring
                // into four quarters.
                let (h, l) = (gap / 2.0, outer);
                for (dx, dy) in [(l, h), (h, l)] {
                    let bar = [
                        [c[0] - dx, c[1] - dy],
                        [c[0] + dx, c[1] - dy],
                        [c[0] + dx, c[1] + dy],
                        [c[0] - dx, c[1] + dy],
                    ];
                    ring = ring.difference(&poly(&bar));
                }
            }
            let rot = get(5);
            let rotated = geo::MultiPolygon::new(
                ring.0
                    .iter()
                    .map(|p| {
                        let rr: Vec<Vec<P>> = rings_of(p)
                            .into_iter()
                            .map(|r| r.into_iter().map(|q| rotate(q, rot)).collect())
                            .collect();
                        let (ext, ints) = rr
                            .split_first()
                            .map_or((vec![], &[][..]), |(e, i)| (e.clone(), i));
                        geo::Polygon::new(ls(&ext), ints.iter().map(|r| ls(r)).collect())
                    })
                    .collect(),
            );
            Ok((true, Drawn::Area(rotated)))
        }
        _ => Err(format!("primitive code {code} is not interpreted")),
    }
}
