//! Reads one Gerber X2 file (RS-274X with attributes) into the objects it draws, in file
//! order, in millimetres: each with its polarity, its net (`.N`) and its outline as thick
//! segments or polygon rings. Our own small reader: every refusal names the file and line,
//! and anything it does not interpret is refused rather than guessed. Written from memory
//! of the Gerber Layer Format Specification (Ucamco, revision 2023.08); aperture macros are
//! in `macros`, aperture blocks here.

mod macros;

use std::borrow::Cow;
use std::collections::BTreeMap;
use std::rc::Rc;

use super::geometry::{self as g, P, Seg};
use crate::diag::Diagnostic;

/// What a file is, from its `.FileFunction` attribute.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord)]
pub enum Role {
    /// Copper layer `n` (1 = top) on a side.
    Copper { layer: u32, side: Side },
    /// The board's outline.
    Profile,
    /// Plated holes (drilled or routed): conductors through the board.
    Plated,
    /// Non-plated holes and routed slots: cut-outs.
    NonPlated,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Side {
    Top,
    Inner,
    Bottom,
}

/// Which net an object belongs to.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Net {
    Named(String),
    /// `N/C`: a pad of no net.
    NoConnect,
    /// The object carried no `.N` attribute.
    Unknown,
}

#[derive(Debug, Clone, PartialEq)]
pub enum Shape {
    /// The union of thick segments (round flashes, obrounds, tracks, arcs drawn round).
    Segs(Vec<Seg>),
    /// A filled area, even-odd over its rings.
    Rings(Vec<Vec<P>>),
}

impl Shape {
    pub fn bbox(&self) -> g::Bbox {
        match self {
            Shape::Segs(segs) => segs.iter().fold(g::Bbox::EMPTY, |b, s| b.union(&s.bbox())),
            Shape::Rings(rings) => g::Bbox::around(rings.iter().flatten().copied()),
        }
    }

    pub fn translated(&self, d: P) -> Shape {
        match self {
            Shape::Segs(segs) => Shape::Segs(
                segs.iter()
                    .map(|s| Seg {
                        a: g::add(s.a, d),
                        b: g::add(s.b, d),
                        r: s.r,
                    })
                    .collect(),
            ),
            Shape::Rings(rings) => Shape::Rings(
                rings
                    .iter()
                    .map(|r| r.iter().map(|p| g::add(*p, d)).collect())
                    .collect(),
            ),
        }
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct Object {
    pub dark: bool,
    pub net: Net,
    pub shape: Shape,
    /// The narrowest width of the object where it is known from its aperture (a drill's
    /// diameter, a rout tool's width); `None` for regions.
    pub width_mm: Option<f64>,
    /// Drawn with D01 (a track or a rout), not flashed or filled.
    pub drawn: bool,
    pub line: usize,
}

/// One file read.
#[derive(Debug, Clone)]
pub struct Image {
    pub role: Role,
    /// The `.FileFunction` value as written, for the report.
    pub function: String,
    pub objects: Vec<Object>,
    /// Some object carried a `.N` attribute.
    pub has_nets: bool,
    /// Profile only: the drawn segments, for building the outline.
    pub outline_segments: Vec<(P, P, usize)>,
}

/// A defined aperture. `Macro`: an aperture macro instantiated with its parameters, its
/// shapes at the origin in mm. `Block`: an aperture block's objects at the origin, with their
/// polarity relative to the flash (dark = the flash's own polarity).
#[derive(Debug, Clone)]
enum Aperture {
    Circle { d: f64 },
    Rect { w: f64, h: f64 },
    Obround { w: f64, h: f64 },
    Polygon { d: f64, n: u32, rot_deg: f64 },
    Macro(Rc<Vec<Shape>>),
    Block(Rc<Vec<Object>>),
}

/// An aperture block being defined: its D code, the line of its `%AB`, its objects so far.
struct OpenBlock {
    code: u32,
    line: usize,
    objects: Vec<Object>,
}

#[derive(Clone, Copy, PartialEq)]
enum Interp {
    Linear,
    Cw,
    Ccw,
}

struct State<'a> {
    file: &'a str,
    inch: Option<bool>,
    format: Option<(u32, u32)>,
    apertures: BTreeMap<u32, Aperture>,
    current: Option<u32>,
    pos: P,
    interp: Interp,
    multi_quadrant: bool,
    dark: bool,
    net: Net,
    role: Option<(Role, String)>,
    has_nets: bool,
    objects: Vec<Object>,
    outline: Vec<(P, P, usize)>,
    region: Option<Vec<Vec<P>>>,
    step_repeat: Option<(usize, u32, u32, f64, f64)>,
    seen_gerber: bool,
    macros: BTreeMap<String, macros::Macro>,
    /// Aperture blocks being defined, innermost last; objects go to the innermost.
    blocks: Vec<OpenBlock>,
}

fn err(file: &str, line: usize, message: impl Into<String>) -> Diagnostic {
    Diagnostic {
        line: Some(line),
        ..Diagnostic::new(file, message)
    }
}

/// Splits the text into commands with the line each starts on: extended commands
/// (`%...%`) as their blocks, word commands up to their `*`. A command is a slice of the
/// text unless line breaks inside it have to be taken out (the delimiters and line breaks
/// are ASCII, so every cut falls between characters).
fn commands(text: &str) -> Vec<(usize, bool, Cow<'_, str>)> {
    let bytes = text.as_bytes();
    let lines_in = |s: &str| s.bytes().filter(|&b| b == b'\n').count();
    let mut out = Vec::new();
    let mut line = 1;
    let mut i = 0;
    while let Some(&b) = bytes.get(i) {
        if b == b'\n' {
            line += 1;
            i += 1;
            continue;
        }
        // Whitespace between commands is skipped, one character at a time.
        if let Some(c) = text[i..].chars().next()
            && c.is_whitespace()
        {
            i += c.len_utf8();
            continue;
        }
        let start = line;
        let (delimiter, from) = if b == b'%' { (b'%', i + 1) } else { (b'*', i) };
        let end = bytes[from..]
            .iter()
            .position(|&b| b == delimiter)
            .map_or(bytes.len(), |at| from + at);
        let body = &text[from..end];
        line += lines_in(body);
        i = end + 1;
        if delimiter == b'%' {
            let body = without(body, b"\r");
            // An extended command holds one or more blocks ended by `*` (a macro holds
            // many, and keeps its line breaks so that each of its blocks is named by its
            // line).
            let trimmed = body.trim_start();
            if trimmed.starts_with("AM") {
                let skipped = lines_in(&body[..body.len() - trimmed.len()]);
                out.push((start + skipped, true, cut(body, str::trim_start)));
            } else {
                // The blocks, with the line breaks inside them taken out too.
                match without(&text[from..end], b"\r\n") {
                    Cow::Borrowed(flat) => {
                        for b in flat.split('*').filter(|b| !b.trim().is_empty()) {
                            out.push((start, true, Cow::Borrowed(b.trim())));
                        }
                    }
                    Cow::Owned(flat) => {
                        for b in flat.split('*').filter(|b| !b.trim().is_empty()) {
                            out.push((start, true, Cow::Owned(b.trim().to_string())));
                        }
                    }
                }
            }
        } else {
            out.push((start, false, cut(without(body, b"\r\n"), str::trim)));
        }
    }
    out
}

/// The letter-number words of a word command that has been checked to be ASCII and to
/// start with a letter: each letter with the text up to the next letter.
fn letter_words(cmd: &str) -> impl Iterator<Item = (char, &str)> {
    let bytes = cmd.as_bytes();
    let mut at = 0;
    std::iter::from_fn(move || {
        let letter = char::from(*bytes.get(at)?);
        let start = at + 1;
        let end = bytes[start..]
            .iter()
            .position(u8::is_ascii_uppercase)
            .map_or(bytes.len(), |k| start + k);
        at = end;
        Some((letter, &cmd[start..end]))
    })
}

/// `text` cut down by `trim`: still a slice of the file's text where it was one.
fn cut<'a>(text: Cow<'a, str>, trim: impl Fn(&str) -> &str) -> Cow<'a, str> {
    match text {
        Cow::Borrowed(t) => Cow::Borrowed(trim(t)),
        Cow::Owned(t) => Cow::Owned(trim(&t).to_string()),
    }
}

/// `text` without any of the (ASCII) bytes `dropped`: itself where it holds none.
fn without<'a>(text: &'a str, dropped: &[u8]) -> Cow<'a, str> {
    if !text.bytes().any(|b| dropped.contains(&b)) {
        return Cow::Borrowed(text);
    }
    Cow::Owned(
        text.chars()
            .filter(|c| !c.is_ascii() || !dropped.contains(&(*c as u8)))
            .collect(),
    )
}

/// Reads a Gerber X2 file. `name` is how the file is named in messages.
pub fn read(name: &str, text: &str) -> Result<Image, Diagnostic> {
    let mut st = State {
        file: name,
        inch: None,
        format: None,
        apertures: BTreeMap::new(),
        current: None,
        pos: [0.0, 0.0],
        interp: Interp::Linear,
        multi_quadrant: false,
        dark: true,
        net: Net::Unknown,
        role: None,
        has_nets: false,
        objects: Vec::new(),
        outline: Vec::new(),
        region: None,
        step_repeat: None,
        seen_gerber: false,
        macros: BTreeMap::new(),
        blocks: Vec::new(),
    };
    let mut ended = false;
    for (line, extended, cmd) in commands(text) {
        if ended {
            break;
        }
        if extended {
            st.extended(line, &cmd)?;
        } else {
            ended = st.word(line, &cmd)?;
        }
    }
    if !st.seen_gerber {
        return Err(err(
            name,
            1,
            "is not a Gerber file: no format (%FS...*%) or unit (%MO...*%) command was found",
        ));
    }
    if st.region.is_some() {
        return Err(err(
            name,
            text.lines().count().max(1),
            "a region (G36) is never closed by G37",
        ));
    }
    if let Some(open) = st.blocks.last() {
        return Err(err(
            name,
            open.line,
            format!(
                "the aperture block D{} opened here (%ABD{}*%) is never closed by %AB*%",
                open.code, open.code
            ),
        ));
    }
    if st.step_repeat.is_some() {
        st.close_step_repeat();
    }
    let Some((role, function)) = st.role else {
        return Err(Diagnostic::new(
            name,
            "has no .FileFunction attribute (%TF.FileFunction,...*%): gapwarden needs Gerber X2 \
             files, which say what each file is; switch X2 attributes on when writing the files",
        ));
    };
    Ok(Image {
        role,
        function,
        objects: st.objects,
        has_nets: st.has_nets,
        outline_segments: st.outline,
    })
}

fn parse_role(file: &str, line: usize, fields: &[&str]) -> Result<Role, Diagnostic> {
    let unknown = || {
        err(
            file,
            line,
            format!(
                "file function \"{}\" is not one gapwarden measures with; [board] files takes \
                 copper layers (Copper,L1,Top ...), the profile (Profile,NP) and drill or rout \
                 files (Plated,...,PTH / NonPlated,...,NPTH): leave this file out",
                fields.join(",")
            ),
        )
    };
    match fields {
        ["Copper", layer, side, ..] => {
            let n = layer
                .strip_prefix('L')
                .and_then(|n| n.parse::<u32>().ok())
                .ok_or_else(unknown)?;
            let side = match *side {
                "Top" => Side::Top,
                "Bot" => Side::Bottom,
                "Inr" => Side::Inner,
                _ => return Err(unknown()),
            };
            Ok(Role::Copper { layer: n, side })
        }
        ["Profile", ..] => Ok(Role::Profile),
        ["Plated", _, _, "PTH", ..] => Ok(Role::Plated),
        ["NonPlated", _, _, "NPTH", ..] => Ok(Role::NonPlated),
        _ => Err(unknown()),
    }
}

fn parse_num(file: &str, line: usize, s: &str, what: &str) -> Result<f64, Diagnostic> {
    s.trim()
        .parse::<f64>()
        .ok()
        .filter(|v| v.is_finite())
        .ok_or_else(|| err(file, line, format!("{what}: \"{s}\" is not a number")))
}

impl State<'_> {
    fn mm(&self, v: f64) -> f64 {
        if self.inch == Some(true) { v * 25.4 } else { v }
    }

    fn extended(&mut self, line: usize, cmd: &str) -> Result<(), Diagnostic> {
        let file = self.file;
        let code = cmd.get(..2).unwrap_or(cmd);
        match code {
            "FS" => {
                // FS L A Xnm Ynm: leading zeros omitted, absolute coordinates.
                let rest = &cmd[2..];
                if !rest.starts_with("LA") {
                    return Err(err(
                        file,
                        line,
                        format!(
                            "coordinate format \"{cmd}\" is not read: only %FSLA...*% (leading \
                             zeros omitted, absolute) is current Gerber"
                        ),
                    ));
                }
                let x = rest[2..].strip_prefix('X').and_then(|s| s.get(..2));
                let dec = x
                    .and_then(|d| d[1..2].parse::<u32>().ok())
                    .filter(|d| *d <= 9)
                    .ok_or_else(|| {
                        err(
                            file,
                            line,
                            format!("coordinate format \"{cmd}\" is not valid"),
                        )
                    })?;
                let int = x.and_then(|d| d[..1].parse::<u32>().ok()).unwrap_or(0);
                self.format = Some((int, dec));
                self.seen_gerber = true;
            }
            "MO" => {
                self.inch = Some(match &cmd[2..] {
                    "MM" => false,
                    "IN" => true,
                    other => {
                        return Err(err(file, line, format!("unit \"{other}\" is not MM or IN")));
                    }
                });
                self.seen_gerber = true;
            }
            "AD" => self.aperture(line, &cmd[2..])?,
            "AM" => {
                let m = macros::parse(file, line, cmd)?;
                if let Some(first) = self.macros.get(&m.name) {
                    return Err(err(
                        file,
                        line,
                        format!(
                            "aperture macro {} is defined a second time (first at line {})",
                            m.name, first.line
                        ),
                    ));
                }
                self.macros.insert(m.name.clone(), m);
            }
            "AB" => self.aperture_block(line, cmd[2..].trim())?,
            "LP" => {
                self.dark = match &cmd[2..] {
                    "D" => true,
                    "C" => false,
                    other => {
                        return Err(err(
                            file,
                            line,
                            format!("polarity \"{other}\" is not D or C"),
                        ));
                    }
                };
            }
            "LM" | "LR" | "LS" => {
                let v = &cmd[2..];
                let identity = matches!((code, v), ("LM", "N") | ("LR", "0") | ("LS", "1"))
                    || (code != "LM"
                        && v.parse::<f64>().ok() == Some(if code == "LR" { 0.0 } else { 1.0 }));
                if !identity {
                    return Err(err(
                        file,
                        line,
                        format!(
                            "aperture transformation %{cmd}*% (mirror, rotate or scale) is not \
                             interpreted by this version"
                        ),
                    ));
                }
            }
            "SR" => {
                if let Some(open) = self.blocks.last() {
                    return Err(err(
                        file,
                        line,
                        format!(
                            "step and repeat (%SR) inside the aperture block D{} (opened at line \
                             {}) is not valid Gerber: close the block first",
                            open.code, open.line
                        ),
                    ));
                }
                if self.step_repeat.is_some() {
                    self.close_step_repeat();
                }
                let rest = &cmd[2..];
                if !rest.is_empty() {
                    let mut vals = BTreeMap::new();
                    let mut key = None;
                    let mut buf = String::new();
                    for c in rest.chars().chain(std::iter::once('Z')) {
                        if c.is_ascii_alphabetic() {
                            if let Some(k) = key {
                                vals.insert(k, parse_num(file, line, &buf, "step and repeat")?);
                            }
                            key = Some(c);
                            buf.clear();
                        } else {
                            buf.push(c);
                        }
                    }
                    let get = |k: char| vals.get(&k).copied().unwrap_or(0.0);
                    let (nx, ny) = (get('X'), get('Y'));
                    if nx < 1.0
                        || ny < 1.0
                        || nx.fract() != 0.0
                        || ny.fract() != 0.0
                        || nx * ny > 1.0e6
                    {
                        return Err(err(
                            file,
                            line,
                            format!(
                                "step and repeat \"{cmd}\": the counts X and Y must be whole numbers from 1"
                            ),
                        ));
                    }
                    if nx * ny > 1.0 {
                        self.step_repeat = Some((
                            self.objects.len(),
                            nx as u32,
                            ny as u32,
                            self.mm(get('I')),
                            self.mm(get('J')),
                        ));
                    }
                }
            }
            "TF" => {
                let fields: Vec<&str> = cmd[2..].split(',').collect();
                if fields.first() == Some(&".FileFunction") {
                    let role = parse_role(file, line, &fields[1..])?;
                    self.role = Some((role, fields[1..].join(",")));
                }
            }
            "TO" => {
                let fields: Vec<&str> = cmd[2..].split(',').collect();
                if fields.first() == Some(&".N") {
                    self.has_nets = true;
                    self.net = match fields.get(1).map(|s| s.trim()) {
                        None | Some("") => Net::Unknown,
                        Some("N/C") => Net::NoConnect,
                        Some(n) => Net::Named(n.to_string()),
                    };
                }
            }
            "TD" => {
                let name = cmd[2..].trim();
                if name.is_empty() || name == ".N" {
                    self.net = Net::Unknown;
                }
            }
            "TA" | "IP" | "IN" | "G0" => {}
            _ => {
                if !self.seen_gerber {
                    return Err(err(
                        file,
                        line,
                        format!("is not a Gerber file: \"%{cmd}\" is not a Gerber command"),
                    ));
                }
                return Err(err(
                    file,
                    line,
                    format!("extended command \"%{cmd}*%\" is not interpreted by this version"),
                ));
            }
        }
        Ok(())
    }

    fn aperture(&mut self, line: usize, body: &str) -> Result<(), Diagnostic> {
        let file = self.file;
        let body = body
            .strip_prefix('D')
            .ok_or_else(|| err(file, line, "aperture definition without D code"))?;
        let digits: String = body.chars().take_while(|c| c.is_ascii_digit()).collect();
        let code: u32 = digits
            .parse()
            .map_err(|_| err(file, line, "aperture definition without a D code number"))?;
        let rest = &body[digits.len()..];
        let (template, params) = rest.split_once(',').unwrap_or((rest, ""));
        let p: Vec<f64> = if params.is_empty() {
            Vec::new()
        } else {
            params
                .split('X')
                .map(|s| parse_num(file, line, s, "aperture parameter"))
                .collect::<Result<_, _>>()?
        };
        let need = |n: usize| -> Result<(), Diagnostic> {
            // Only the standard apertures come here: a macro's parameters may be negative.
            if p.len() < n || p.iter().any(|v| *v < 0.0) {
                Err(err(
                    file,
                    line,
                    format!("aperture D{code} ({template}) has missing or negative sizes"),
                ))
            } else {
                Ok(())
            }
        };
        let ap = match template {
            "C" => {
                need(1)?;
                Aperture::Circle { d: self.mm(p[0]) }
            }
            "R" => {
                need(2)?;
                Aperture::Rect {
                    w: self.mm(p[0]),
                    h: self.mm(p[1]),
                }
            }
            "O" => {
                need(2)?;
                Aperture::Obround {
                    w: self.mm(p[0]),
                    h: self.mm(p[1]),
                }
            }
            "P" => {
                need(2)?;
                let n = p[1];
                if !(3.0..=12.0).contains(&n) || n.fract() != 0.0 {
                    return Err(err(
                        file,
                        line,
                        format!("polygon aperture D{code}: {n} vertices; Gerber allows 3 to 12"),
                    ));
                }
                Aperture::Polygon {
                    d: self.mm(p[0]),
                    n: n as u32,
                    rot_deg: p.get(2).copied().unwrap_or(0.0),
                }
            }
            other => {
                let Some(m) = self.macros.get(other) else {
                    return Err(err(
                        file,
                        line,
                        format!(
                            "aperture D{code} uses the template \"{other}\", which is neither a \
                             standard aperture (C, R, O, P) nor a macro defined before it (%AM{other}*...%)"
                        ),
                    ));
                };
                let to_mm = self.mm(1.0);
                Aperture::Macro(Rc::new(m.instantiate(file, line, code, &p, to_mm)?))
            }
        };
        self.apertures.insert(code, ap);
        Ok(())
    }

    fn coord(&self, line: usize, s: &str) -> Result<f64, Diagnostic> {
        let Some((_, dec)) = self.format else {
            return Err(err(
                self.file,
                line,
                "a coordinate comes before the format (%FS...*%)",
            ));
        };
        if self.inch.is_none() {
            return Err(err(
                self.file,
                line,
                "a coordinate comes before the unit (%MOMM*% or %MOIN*%)",
            ));
        }
        let v: i64 = s.parse().map_err(|_| {
            err(
                self.file,
                line,
                format!("coordinate \"{s}\" is not a whole number"),
            )
        })?;
        Ok(self.mm(v as f64 / 10f64.powi(dec as i32)))
    }

    /// Returns true at the end of the file (M02).
    fn word(&mut self, line: usize, cmd: &str) -> Result<bool, Diagnostic> {
        let file = self.file;
        if cmd.is_empty() {
            return Ok(false);
        }
        if cmd.starts_with("G04") || cmd.starts_with("G4 ") || cmd == "G4" {
            return Ok(false);
        }
        // Letter-number words: G01X100Y-200D01. Every character is checked first; then
        // the words are read as slices of the command (all ASCII by then).
        let mut in_word = false;
        for c in cmd.chars() {
            if c.is_ascii_uppercase() {
                in_word = true;
            } else if !(in_word && (c.is_ascii_digit() || c == '-' || c == '+' || c == '.')) {
                let what = if self.seen_gerber {
                    format!("\"{cmd}\" is not a Gerber command")
                } else {
                    format!("is not a Gerber file: \"{cmd}\" is not a Gerber command")
                };
                return Err(err(file, line, what));
            }
        }
        let (mut x, mut y, mut i, mut j, mut d) = (None, None, None, None, None);
        for (letter, num) in letter_words(cmd) {
            let bad = || {
                err(
                    file,
                    line,
                    format!("\"{letter}{num}\" in \"{cmd}\" is not valid"),
                )
            };
            match letter {
                'G' => match num.parse::<u32>().map_err(|_| bad())? {
                    1 => self.interp = Interp::Linear,
                    2 => self.interp = Interp::Cw,
                    3 => self.interp = Interp::Ccw,
                    36 => {
                        if self.region.is_some() {
                            return Err(err(file, line, "G36 inside a region"));
                        }
                        self.region = Some(Vec::new());
                    }
                    37 => self.close_region(line)?,
                    74 => {
                        return Err(err(
                            file,
                            line,
                            "single-quadrant arcs (G74) are not interpreted: they were removed \
                             from the Gerber specification; write arcs in G75 mode",
                        ));
                    }
                    75 => self.multi_quadrant = true,
                    54 | 55 | 90 => {}
                    70 => self.inch = Some(true),
                    71 => self.inch = Some(false),
                    91 => {
                        return Err(err(
                            file,
                            line,
                            "incremental coordinates (G91) are not interpreted",
                        ));
                    }
                    other => {
                        return Err(err(
                            file,
                            line,
                            format!("G{other:02} is not interpreted by this version"),
                        ));
                    }
                },
                'X' => x = Some(self.coord(line, num)?),
                'Y' => y = Some(self.coord(line, num)?),
                'I' => i = Some(self.coord(line, num)?),
                'J' => j = Some(self.coord(line, num)?),
                'D' => d = Some(num.parse::<u32>().map_err(|_| bad())?),
                'M' => match num.parse::<u32>().map_err(|_| bad())? {
                    2 | 0 | 30 => return Ok(true),
                    1 => {}
                    _ => return Err(bad()),
                },
                _ => return Err(bad()),
            }
        }
        let target = [x.unwrap_or(self.pos[0]), y.unwrap_or(self.pos[1])];
        match d {
            None if x.is_some() || y.is_some() => {
                // Deprecated modal D01: a coordinate alone continues the last operation.
                return Err(err(
                    file,
                    line,
                    format!("\"{cmd}\": a coordinate without an operation code (D01, D02, D03)"),
                ));
            }
            None => {}
            Some(1) => self.draw(line, target, [i.unwrap_or(0.0), j.unwrap_or(0.0)])?,
            Some(2) => {
                if let Some(region) = &mut self.region {
                    region.push(vec![target]);
                }
                self.pos = target;
            }
            Some(3) => {
                self.flash(line, target)?;
                self.pos = target;
            }
            Some(code) if code >= 10 => {
                if !self.apertures.contains_key(&code) {
                    return Err(err(
                        file,
                        line,
                        format!("aperture D{code} is selected but never defined"),
                    ));
                }
                self.current = Some(code);
            }
            Some(code) => {
                return Err(err(
                    file,
                    line,
                    format!("D{code:02} is not an operation code"),
                ));
            }
        }
        Ok(false)
    }

    fn current_aperture(&self, line: usize) -> Result<Aperture, Diagnostic> {
        self.current
            .and_then(|c| self.apertures.get(&c).cloned())
            .ok_or_else(|| {
                err(
                    self.file,
                    line,
                    "a draw or flash comes before any aperture is selected",
                )
            })
    }

    fn push(&mut self, line: usize, shape: Shape, width_mm: Option<f64>, drawn: bool) {
        let o = Object {
            dark: self.dark,
            net: self.net.clone(),
            shape,
            width_mm,
            drawn,
            line,
        };
        match self.blocks.last_mut() {
            Some(open) => open.objects.push(o),
            None => self.objects.push(o),
        }
    }

    /// `%ABDnn*%` opens a block, `%AB*%` closes the innermost one (blocks nest). Between them
    /// the commands draw as anywhere else, but into the block, which becomes aperture Dnn.
    fn aperture_block(&mut self, line: usize, rest: &str) -> Result<(), Diagnostic> {
        let file = self.file;
        if rest.is_empty() {
            let Some(open) = self.blocks.pop() else {
                return Err(err(
                    file,
                    line,
                    "%AB*% closes an aperture block, but none is open",
                ));
            };
            if self.region.is_some() {
                return Err(err(
                    file,
                    line,
                    format!(
                        "the aperture block D{} (opened at line {}) is closed inside a region \
                         (G36 without G37)",
                        open.code, open.line
                    ),
                ));
            }
            self.apertures
                .insert(open.code, Aperture::Block(Rc::new(open.objects)));
            return Ok(());
        }
        let code = rest
            .strip_prefix('D')
            .and_then(|d| d.parse::<u32>().ok())
            .filter(|d| *d >= 10)
            .ok_or_else(|| {
                err(
                    file,
                    line,
                    format!(
                        "aperture block \"%AB{rest}*%\": expected a D code from D10, as in \
                         %ABD12*%, or %AB*% to close the block"
                    ),
                )
            })?;
        if self.role.as_ref().is_some_and(|(r, _)| *r == Role::Profile) {
            // The profile's draws become the outline where they are drawn, not where a
            // block is flashed.
            return Err(err(
                file,
                line,
                "aperture blocks in the profile file are not interpreted: draw the board \
                 outline with plain draws",
            ));
        }
        if self.region.is_some() {
            return Err(err(
                file,
                line,
                "an aperture block (%AB) opened inside a region (G36) is not valid Gerber",
            ));
        }
        self.blocks.push(OpenBlock {
            code,
            line,
            objects: Vec::new(),
        });
        Ok(())
    }

    fn draw(&mut self, line: usize, to: P, ij: P) -> Result<(), Diagnostic> {
        let from = self.pos;
        self.pos = to;
        let points = match self.interp {
            Interp::Linear => vec![from, to],
            Interp::Cw | Interp::Ccw => {
                if !self.multi_quadrant {
                    return Err(err(
                        self.file,
                        line,
                        "an arc before G75 (multi-quadrant mode) was set",
                    ));
                }
                let centre = g::add(from, ij);
                let r0 = g::dist(from, centre);
                let r1 = g::dist(to, centre);
                // The specification allows a small mismatch of start and end radius.
                if (r0 - r1).abs() > 0.001_f64.max(r0 * 1e-3) + 1e-9 {
                    return Err(err(
                        self.file,
                        line,
                        format!(
                            "arc: start radius {r0:.4} mm and end radius {r1:.4} mm differ; the centre offset (I, J) is wrong"
                        ),
                    ));
                }
                let a0 = (from[1] - centre[1]).atan2(from[0] - centre[0]);
                let a1 = (to[1] - centre[1]).atan2(to[0] - centre[0]);
                let tau = std::f64::consts::TAU;
                let mut sweep = if self.interp == Interp::Ccw {
                    (a1 - a0).rem_euclid(tau)
                } else {
                    -((a0 - a1).rem_euclid(tau))
                };
                // Start and end at one point: a full circle (G75).
                if g::dist(from, to) < 1e-9 {
                    sweep = if self.interp == Interp::Ccw {
                        tau
                    } else {
                        -tau
                    };
                }
                let mut pts = g::arc_points(centre, r0.max(r1), a0, sweep);
                if let Some(first) = pts.first_mut() {
                    *first = from;
                }
                if let Some(last) = pts.last_mut() {
                    *last = to;
                }
                pts
            }
        };
        if let Some(region) = &mut self.region {
            match region.last_mut() {
                Some(contour) => contour.extend_from_slice(&points[1..]),
                None => region.push(points),
            }
            return Ok(());
        }
        if self.role.as_ref().is_some_and(|(r, _)| *r == Role::Profile) {
            for w in points.windows(2) {
                self.outline.push((w[0], w[1], line));
            }
            return Ok(());
        }
        let ap = self.current_aperture(line)?;
        match ap {
            Aperture::Circle { d } => {
                let segs = points
                    .windows(2)
                    .map(|w| Seg {
                        a: w[0],
                        b: w[1],
                        r: d / 2.0,
                    })
                    .collect();
                self.push(line, Shape::Segs(segs), Some(d), true);
            }
            Aperture::Rect { w, h } if self.interp == Interp::Linear => {
                // A rectangle swept along a line: the convex hull of its two end positions.
                let mut pts = Vec::new();
                for c in [from, to] {
                    for (sx, sy) in [(-1.0, -1.0), (1.0, -1.0), (1.0, 1.0), (-1.0, 1.0)] {
                        pts.push([c[0] + sx * w / 2.0, c[1] + sy * h / 2.0]);
                    }
                }
                self.push(
                    line,
                    Shape::Rings(vec![convex_hull(pts)]),
                    Some(w.min(h)),
                    true,
                );
            }
            _ => {
                return Err(err(
                    self.file,
                    line,
                    "a draw (D01) with an aperture other than a circle (or a rectangle on a \
                     straight line) is not valid Gerber",
                ));
            }
        }
        Ok(())
    }

    fn flash(&mut self, line: usize, at: P) -> Result<(), Diagnostic> {
        if self.region.is_some() {
            return Err(err(
                self.file,
                line,
                "a flash (D03) inside a region (G36) is not valid Gerber",
            ));
        }
        let ap = self.current_aperture(line)?;
        let (shape, width) = match ap {
            Aperture::Circle { d } => (
                Shape::Segs(vec![Seg {
                    a: at,
                    b: at,
                    r: d / 2.0,
                }]),
                d,
            ),
            Aperture::Rect { w, h } => (
                Shape::Rings(vec![vec![
                    [at[0] - w / 2.0, at[1] - h / 2.0],
                    [at[0] + w / 2.0, at[1] - h / 2.0],
                    [at[0] + w / 2.0, at[1] + h / 2.0],
                    [at[0] - w / 2.0, at[1] + h / 2.0],
                ]]),
                w.min(h),
            ),
            Aperture::Obround { w, h } => {
                let r = w.min(h) / 2.0;
                let (dx, dy) = if w >= h {
                    (w / 2.0 - r, 0.0)
                } else {
                    (0.0, h / 2.0 - r)
                };
                (
                    Shape::Segs(vec![Seg {
                        a: [at[0] - dx, at[1] - dy],
                        b: [at[0] + dx, at[1] + dy],
                        r,
                    }]),
                    w.min(h),
                )
            }
            Aperture::Polygon { d, n, rot_deg } => {
                let ring = (0..n)
                    .map(|k| {
                        let a = rot_deg.to_radians() + std::f64::consts::TAU * k as f64 / n as f64;
                        [at[0] + d / 2.0 * a.cos(), at[1] + d / 2.0 * a.sin()]
                    })
                    .collect();
                (
                    Shape::Rings(vec![ring]),
                    d * (std::f64::consts::PI / n as f64).cos(),
                )
            }
            Aperture::Macro(shapes) => {
                let cut_out = self
                    .role
                    .as_ref()
                    .is_some_and(|(r, _)| *r == Role::NonPlated);
                if cut_out
                    && shapes
                        .iter()
                        .any(|s| matches!(s, Shape::Rings(r) if r.len() > 1))
                {
                    // A cut-out is taken ring by ring; an island inside one would be lost.
                    return Err(err(
                        self.file,
                        line,
                        "a macro pad with a hole (exposure off inside it) flashed in a \
                         non-plated drill or rout file is not interpreted: give the cut-out \
                         as a region or a rout",
                    ));
                }
                for s in shapes.iter() {
                    // A circle keeps its diameter (a drill); other shapes' width is found
                    // from their outline where it is needed.
                    let width = match s {
                        Shape::Segs(segs) if segs.len() == 1 => Some(2.0 * segs[0].r),
                        _ => None,
                    };
                    self.push(line, s.translated(at), width, false);
                }
                return Ok(());
            }
            Aperture::Block(objects) => {
                // Each object keeps its polarity when the block is flashed dark and takes the
                // opposite when it is flashed clear; the net is the flash's (a flash is one
                // object and carries the attributes in force when it is made).
                let flash_dark = self.dark;
                for o in objects.iter() {
                    let shape = o.shape.translated(at);
                    self.dark = o.dark == flash_dark;
                    self.push(line, shape, o.width_mm, o.drawn);
                }
                self.dark = flash_dark;
                return Ok(());
            }
        };
        self.push(line, shape, Some(width), false);
        Ok(())
    }

    fn close_region(&mut self, line: usize) -> Result<(), Diagnostic> {
        let Some(contours) = self.region.take() else {
            return Err(err(self.file, line, "G37 without a region started by G36"));
        };
        for mut c in contours.into_iter().filter(|c| c.len() > 1) {
            let (first, last) = (c[0], c[c.len() - 1]);
            if g::dist(first, last) > 1e-6 {
                return Err(err(
                    self.file,
                    line,
                    format!(
                        "a region contour is not closed: it starts at ({:.4}, {:.4}) mm and ends at ({:.4}, {:.4}) mm",
                        first[0], first[1], last[0], last[1]
                    ),
                ));
            }
            c.pop();
            if c.len() >= 3 {
                if self.role.as_ref().is_some_and(|(r, _)| *r == Role::Profile) {
                    for k in 0..c.len() {
                        self.outline.push((c[k], c[(k + 1) % c.len()], line));
                    }
                    continue;
                }
                self.push(line, Shape::Rings(vec![c]), None, false);
            }
        }
        Ok(())
    }

    fn close_step_repeat(&mut self) {
        let Some((start, nx, ny, dx, dy)) = self.step_repeat.take() else {
            return;
        };
        let block: Vec<Object> = self.objects[start..].to_vec();
        for iy in 0..ny {
            for ix in 0..nx {
                if ix == 0 && iy == 0 {
                    continue;
                }
                let d = [ix as f64 * dx, iy as f64 * dy];
                for o in &block {
                    self.objects.push(Object {
                        shape: o.shape.translated(d),
                        ..o.clone()
                    });
                }
            }
        }
    }
}

/// Convex hull (Andrew's monotone chain), counter-clockwise.
pub fn convex_hull(mut pts: Vec<P>) -> Vec<P> {
    pts.sort_by(|a, b| a[0].total_cmp(&b[0]).then(a[1].total_cmp(&b[1])));
    pts.dedup();
    if pts.len() < 3 {
        return pts;
    }
    let mut lower: Vec<P> = Vec::new();
    for &p in &pts {
        while lower.len() >= 2
            && g::cross(
                g::sub(lower[lower.len() - 1], lower[lower.len() - 2]),
                g::sub(p, lower[lower.len() - 2]),
            ) <= 0.0
        {
            lower.pop();
        }
        lower.push(p);
    }
    let mut upper: Vec<P> = Vec::new();
    for &p in pts.iter().rev() {
        while upper.len() >= 2
            && g::cross(
                g::sub(upper[upper.len() - 1], upper[upper.len() - 2]),
                g::sub(p, upper[upper.len() - 2]),
            ) <= 0.0
        {
            upper.pop();
        }
        upper.push(p);
    }
    lower.pop();
    upper.pop();
    lower.extend(upper);
    lower
}

#[cfg(test)]
mod tests {
    use super::*;

    /// `commands` as first written, a character at a time with a new string for every
    /// command: the reference the slicing reader is held to.
    fn commands_reference(text: &str) -> Vec<(usize, bool, String)> {
        let mut out = Vec::new();
        let mut line = 1;
        let mut chars = text.chars().peekable();
        while let Some(&c) = chars.peek() {
            if c == '\n' {
                line += 1;
                chars.next();
                continue;
            }
            if c.is_whitespace() {
                chars.next();
                continue;
            }
            let start = line;
            if c == '%' {
                chars.next();
                let mut body = String::new();
                for c in chars.by_ref() {
                    if c == '%' {
                        break;
                    }
                    if c == '\n' {
                        line += 1;
                    }
                    if c != '\r' {
                        body.push(c);
                    }
                }
                // An extended command holds one or more blocks ended by `*` (a macro holds many,
                // and keeps its line breaks so that each of its blocks is named by its line).
                if body.trim_start().starts_with("AM") {
                    let lead = body.len() - body.trim_start().len();
                    let skipped = body[..lead].matches('\n').count();
                    out.push((start + skipped, true, body.trim_start().to_string()));
                } else {
                    let flat: String = body.chars().filter(|c| *c != '\n').collect();
                    for b in flat.split('*').filter(|b| !b.trim().is_empty()) {
                        out.push((start, true, b.trim().to_string()));
                    }
                }
            } else {
                let mut word = String::new();
                for c in chars.by_ref() {
                    if c == '*' {
                        break;
                    }
                    if c == '\n' {
                        line += 1;
                        continue;
                    }
                    if c != '\r' {
                        word.push(c);
                    }
                }
                out.push((start, false, word.trim().to_string()));
            }
        }
        out
    }

    /// The commands of every shipped board file and of 20,000 generated texts (delimiters,
    /// line breaks, carriage returns, spaces, a macro's `AM`, non-ASCII letters and
    /// whitespace, in random order) are those the reference reads, with the same lines.
    #[test]
    fn commands_are_read_as_the_reference_reads_them() {
        let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
        let mut texts: Vec<String> = ["top", "bottom", "outline", "pth", "npth"]
            .iter()
            .map(|f| {
                std::fs::read_to_string(root.join(format!("examples/board/{f}.gbr")))
                    .expect("the example board's files read")
            })
            .collect();
        let pieces = [
            "%",
            "*",
            "\n",
            "\r",
            " ",
            "\t",
            "AM",
            "X12",
            "D01",
            "%FSLAX46Y46",
            "é",
            "\u{2003}",
            "\u{85}",
            "TO.N,GND",
            "",
        ];
        let mut next = crate::board::geometry::uniform_sequence(7);
        for _ in 0..20_000 {
            let len = (next() * 30.0) as usize;
            texts.push(
                (0..len)
                    .map(|_| pieces[(next() * pieces.len() as f64) as usize])
                    .collect(),
            );
        }
        for text in &texts {
            let read: Vec<(usize, bool, String)> = commands(text)
                .into_iter()
                .map(|(line, extended, cmd)| (line, extended, cmd.into_owned()))
                .collect();
            assert_eq!(read, commands_reference(text), "{text:?}");
        }
    }
}
