//! The rule book: the published tables and the checklist the engine reads, loaded from TOML
//! files in `rules/`. The shipped files are embedded in the binary; a folder given with
//! `--rules` adds tables and checks, or replaces shipped ones by id where it says so.
//! Every table and check names its source and provenance.

mod check_defs;
pub mod predicate;
mod tables;

use std::collections::BTreeMap;
use std::path::Path;

use serde::{Deserialize, Serialize};

use crate::diag::{Diagnostic, Problems, Source};
pub use check_defs::{CheckDef, Cond, Over, Retired};
pub use tables::*;

/// Tolerance for reading an input against a table row: a value within `EPS` of a row's
/// bound counts as on it. Inputs are written with a handful of decimals in volts,
/// millimetres, metres or CTI, and the engine converts them (V to kV, rms to peak with
/// √2) with a rounding error near 1e-16 of the value, so below 1e-10 for anything up to
/// the 1e6 that the input limits allow. 1e-9 sits above that noise and far below any
/// gap between table rows or any resolution a designer writes (a micrometre, a millivolt),
/// so it never moves a value to a different row by more than noise.
pub const EPS: f64 = 1e-9;

/// Every shipped rule file (`rules/**/*.toml`, path inside `rules/` and text), embedded at
/// build time by `build.rs`.
pub use shipped::SHIPPED_RULES;

mod shipped {
    /// One shipped rule file as build.rs prepared it.
    pub struct ShippedRule {
        /// Path inside `rules/`.
        pub name: &'static str,
        pub text: &'static str,
        /// The same content as JSON, read much faster than TOML.
        pub json: &'static str,
        /// SHA-256 of `text`.
        pub sha256: &'static str,
        /// The line of each `[[check]]` header, in order.
        pub check_lines: &'static [usize],
        pub id: &'static str,
        pub title: &'static str,
        pub source: &'static str,
        pub provenance: &'static str,
        pub is_checks: bool,
    }

    include!(concat!(env!("OUT_DIR"), "/shipped_rules.rs"));
}

/// What a report says about one loaded rule file.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct RuleInfo {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    pub sha256: String,
    /// "shipped", or "house" for a file from a `--rules` folder.
    pub origin: String,
    /// File name (never a full path, so reports carry no machine paths).
    pub file: String,
    /// The file's text, for `gapwarden rules ID`.
    #[serde(skip)]
    pub text: String,
}

/// The fields every house rule file carries, read leniently to learn its id, with
/// positions for messages.
#[derive(Deserialize)]
struct Header {
    id: toml::Spanned<String>,
    title: String,
    source: String,
    provenance: String,
    #[serde(default)]
    overrides: Option<toml::Spanned<bool>>,
    #[serde(default)]
    check: Option<serde::de::IgnoredAny>,
}

/// All loaded tables, typed, and the checklist.
#[derive(Debug, Clone)]
pub struct RuleBook {
    pub info: Vec<RuleInfo>,
    pub impulse: ImpulseTable,
    pub clearance: ClearanceTable,
    pub steady_state: SteadyStateClearanceTable,
    pub creepage: CreepageTable,
    pub reinforced: ReinforcedRule,
    pub altitude: AltitudeTable,
    pub grooves: GrooveTable,
    pub material_groups: MaterialGroupTable,
    pub board: BoardSpacingTable,
    pub capacitors: CapacitorSubclasses,
    pub test_voltages: TestVoltages,
    pub thermal: ThermalClasses,
    pub solid: SolidInsulation,
    pub minimums: MinimumDistances,
    /// Tables owned by the power-entry evaluation.
    pub power_entry: crate::power_entry::PowerEntryRules,
    /// Tables owned by the EMC evaluation.
    pub emc: crate::emc::EmcRules,
    /// The end-product standards' tables (`rules/<standard>/`).
    pub standards: crate::standards::StandardRules,
    pub checks: Vec<CheckDef>,
    /// The checks, compiled once.
    pub compiled_checks: crate::checks::CompiledChecks,
}

/// A rule file on its way in: its text, where it came from, and whether it holds checks.
struct Loaded {
    source: Source,
    /// Shipped files: their JSON form, SHA-256, header and check lines, from build.rs.
    shipped: Option<&'static shipped::ShippedRule>,
    /// The file's path inside its rules folder (`checks/barrier.toml`): no machine path.
    file: String,
    origin: &'static str,
    is_checks: bool,
}

impl RuleBook {
    /// The shipped tables and checks only.
    pub fn shipped() -> Result<RuleBook, Problems> {
        Self::load(None)
    }

    /// The shipped rules, with those in `house` (if given) added or replacing by id.
    pub fn load(house: Option<&Path>) -> Result<RuleBook, Problems> {
        Self::load_with_fields(house, &predicate::Fields::shipped())
    }

    /// Loads with the checks validated against `fields`; an empty list validates nothing,
    /// which is how the list itself is regenerated (`tests/it/check_fields.rs`).
    pub fn load_with_fields(
        house: Option<&Path>,
        fields: &predicate::Fields,
    ) -> Result<RuleBook, Problems> {
        let mut files: BTreeMap<String, Loaded> = BTreeMap::new();
        let mut order: Vec<String> = Vec::new();
        let mut problems = Vec::new();
        // Shipped files: ids and headers as build.rs read them; they never clash (tested).
        for rule in SHIPPED_RULES {
            order.push(rule.id.to_string());
            files.insert(
                rule.id.to_string(),
                Loaded {
                    source: Source::new(format!("rules/{}", rule.name), rule.text),
                    shipped: Some(rule),
                    file: rule.name.to_string(),
                    origin: "shipped",
                    is_checks: rule.is_checks,
                },
            );
        }
        let house_files = match house {
            Some(dir) => read_folder(dir)?,
            None => Vec::new(),
        };
        for (file, source) in house_files {
            let header = match toml::from_str::<Header>(&source.text) {
                Ok(h) => h,
                Err(e) => {
                    problems.push(toml_problem(
                        &source,
                        &e,
                        "a rule file needs id, title, source and provenance",
                    ));
                    continue;
                }
            };
            let id = header.id.get_ref().clone();
            let overrides = header.overrides.as_ref().is_some_and(|o| *o.get_ref());
            let exists = files.contains_key(&id);
            if exists && !overrides {
                let first = files
                    .get(&id)
                    .map(|l| l.source.name.clone())
                    .unwrap_or_default();
                problems.push(
                    source
                        .diag(&header.id.span(), format!("id \"{id}\" is already used by {first}"))
                        .with_key("id")
                        .with_help("to replace that file, add `overrides = true`; to add a new one, choose a new id"),
                );
                continue;
            }
            if !exists && overrides {
                let span = header
                    .overrides
                    .as_ref()
                    .map(|o| o.span())
                    .unwrap_or_else(|| header.id.span());
                problems.push(
                    source
                        .diag(
                            &span,
                            format!("overrides = true, but no loaded rule file has id \"{id}\""),
                        )
                        .with_key("overrides"),
                );
                continue;
            }
            if !exists {
                order.push(id.clone());
            }
            let is_checks = header.check.is_some();
            files.insert(
                id,
                Loaded {
                    source,
                    shipped: None,
                    file,
                    origin: "house",
                    is_checks,
                },
            );
        }
        if !problems.is_empty() {
            return Err(Problems(problems));
        }
        let mut info = Vec::new();
        for id in &order {
            let Some(l) = files.get(id) else { continue };
            let (title, source, provenance, sha256) = match l.shipped {
                Some(rule) => (
                    rule.title.to_string(),
                    rule.source.to_string(),
                    rule.provenance.to_string(),
                    rule.sha256.to_string(),
                ),
                None => match toml::from_str::<Header>(&l.source.text) {
                    Ok(h) => (
                        h.title,
                        h.source,
                        h.provenance,
                        crate::sha256_hex(l.source.text.as_bytes()),
                    ),
                    Err(_) => continue,
                },
            };
            info.push(RuleInfo {
                id: id.clone(),
                title,
                source,
                provenance,
                sha256,
                origin: l.origin.to_string(),
                file: l.file.clone(),
                text: l.source.text.clone(),
            });
        }
        let mut typed = Typed {
            files: &files,
            problems: Vec::new(),
        };
        let impulse = typed.get::<ImpulseTable>(ImpulseTable::ID);
        let clearance = typed.get::<ClearanceTable>(ClearanceTable::ID);
        let steady_state = typed.get::<SteadyStateClearanceTable>(SteadyStateClearanceTable::ID);
        let creepage = typed.get::<CreepageTable>(CreepageTable::ID);
        let reinforced = typed.get::<ReinforcedRule>(ReinforcedRule::ID);
        let altitude = typed.get::<AltitudeTable>(AltitudeTable::ID);
        let grooves = typed.get::<GrooveTable>(GrooveTable::ID);
        let material_groups = typed.get::<MaterialGroupTable>(MaterialGroupTable::ID);
        let board = typed.get::<BoardSpacingTable>(BoardSpacingTable::ID);
        let capacitors = typed.get::<CapacitorSubclasses>(CapacitorSubclasses::ID);
        let test_voltages = typed.get::<TestVoltages>(TestVoltages::ID);
        let thermal = typed.get::<ThermalClasses>(ThermalClasses::ID);
        let solid = typed.get::<SolidInsulation>(SolidInsulation::ID);
        let minimums = typed.get::<MinimumDistances>(MinimumDistances::ID);
        let power_entry = crate::power_entry::PowerEntryRules::load(&mut typed);
        let emc = crate::emc::EmcRules::load(&mut typed);
        let standards = crate::standards::StandardRules::load(&mut typed);
        let mut problems = typed.problems;
        let check_sources: Vec<check_defs::CheckSource> = order
            .iter()
            .filter_map(|id| files.get(id))
            .filter(|l| l.is_checks)
            .map(|l| check_defs::CheckSource {
                source: &l.source,
                file: l.file.as_str(),
                origin: l.origin,
                shipped: l.shipped.map(|s| (s.json, s.check_lines)),
            })
            .collect();
        // Retired check ids: the shipped list, plus any a house file retires itself.
        #[derive(Deserialize)]
        struct RetiredList {
            #[serde(default)]
            retired: Vec<Retired>,
        }
        let mut retired: Vec<Retired> = Vec::new();
        for l in order
            .iter()
            .filter_map(|id| files.get(id))
            .filter(|l| !l.is_checks)
        {
            let list = match l.shipped {
                Some(s) if s.json.contains("\"retired\"") => {
                    serde_json::from_str::<RetiredList>(s.json)
                        .map_err(|e| Diagnostic::new(&l.source.name, e.to_string()))
                }
                Some(_) => continue,
                None if l.source.text.contains("retired") => {
                    toml::from_str::<RetiredList>(&l.source.text)
                        .map_err(|e| toml_problem(&l.source, &e, ""))
                }
                None => continue,
            };
            match list {
                Ok(list) => retired.extend(list.retired),
                Err(d) => problems.push(d),
            }
        }
        let checks = check_defs::load_checks(&check_sources, fields, &retired, &mut problems);
        let compiled_checks = match crate::checks::CompiledChecks::new(&checks) {
            Ok(c) => Some(c),
            Err(p) => {
                problems.extend(p);
                None
            }
        };
        if !problems.is_empty() {
            return Err(Problems(problems));
        }
        // Every table that failed has left a problem above; the rest are all present.
        fn need<T>(table: Option<T>) -> Result<T, Problems> {
            table.ok_or_else(|| {
                Problems(vec![Diagnostic::new(
                    "rules",
                    "a rule table could not be loaded",
                )])
            })
        }
        let book = RuleBook {
            info,
            impulse: need(impulse)?,
            clearance: need(clearance)?,
            steady_state: need(steady_state)?,
            creepage: need(creepage)?,
            reinforced: need(reinforced)?,
            altitude: need(altitude)?,
            grooves: need(grooves)?,
            material_groups: need(material_groups)?,
            board: need(board)?,
            capacitors: need(capacitors)?,
            test_voltages: need(test_voltages)?,
            thermal: need(thermal)?,
            solid: need(solid)?,
            minimums: need(minimums)?,
            power_entry: need(power_entry)?,
            emc: need(emc)?,
            standards: need(standards)?,
            checks,
            compiled_checks: need(compiled_checks)?,
        };
        book.try_house_checks()?;
        Ok(book)
    }

    /// Tries house checks on the shipped example design, with at least one item of every
    /// kind, so that a check naming a field that does not exist fails now, not only on the
    /// first design that has such an item. Problems of the example itself (a house table
    /// it falls outside) are not the house checks' problems and are left to the real run.
    fn try_house_checks(&self) -> Result<(), Problems> {
        let house: Vec<&CheckDef> = self
            .checks
            .iter()
            .filter(|c| c.origin != "shipped")
            .collect();
        if house.is_empty() {
            return Ok(());
        }
        let (name, text) = crate::commands::EXAMPLES[0];
        let example = Source::new(format!("examples/{name}.toml"), text);
        let Ok(mut sample) = crate::report::figures(&example, self) else {
            return Ok(());
        };
        sample.input_warnings.push(crate::report::InputWarning {
            key: Some("barrier[1].clearance_mm".to_string()),
            message: "a sample warning".to_string(),
            line: Some(1),
            column: Some(1),
        });
        let context = minijinja::Value::from(minijinja::value::Serde(&sample));
        let problems: Vec<Diagnostic> = house
            .into_iter()
            .filter_map(|check| crate::checks::unknown_fields(check, &context).err())
            .collect();
        if problems.is_empty() {
            Ok(())
        } else {
            Err(Problems(problems))
        }
    }

    pub fn info(&self, id: &str) -> Option<&RuleInfo> {
        self.info.iter().find(|i| i.id == id)
    }
}

/// Typed access to the loaded rule files, collecting every problem; domain modules load
/// their own tables through it (`PowerEntryRules::load`, `EmcRules::load`).
pub struct Typed<'a> {
    files: &'a BTreeMap<String, Loaded>,
    problems: Vec<Diagnostic>,
}

impl Typed<'_> {
    /// The table with this id, parsed and checked; `None` (with a problem) otherwise.
    pub fn get<T: Table>(&mut self, id: &str) -> Option<T> {
        let Some(loaded) = self.files.get(id) else {
            self.problems.push(Diagnostic::new(
                "rules",
                format!("no rule table with id \"{id}\" is loaded"),
            ));
            return None;
        };
        let source = &loaded.source;
        let parsed = match &loaded.shipped {
            Some(shipped) => serde_json::from_str::<T>(shipped.json)
                .map_err(|e| Diagnostic::new(&source.name, e.to_string())),
            None => toml::from_str::<T>(&source.text).map_err(|e| toml_problem(source, &e, "")),
        };
        match parsed {
            Ok(table) => match table.check() {
                Ok(()) => Some(table),
                Err(message) => {
                    self.problems.push(locate_check_problem(source, &message));
                    None
                }
            },
            Err(d) => {
                self.problems.push(d);
                None
            }
        }
    }
}

/// A rule file that serde could not read, located, with the key it stands at and the
/// expected form in words ("a number", not "f64").
pub(crate) fn toml_problem(source: &Source, e: &toml::de::Error, help: &str) -> Diagnostic {
    let message = e
        .message()
        .trim()
        .replace("expected f64", "expected a number")
        .replace("expected u32", "expected a whole number")
        .replace("expected usize", "expected a whole number");
    let mut d = match e.span() {
        Some(span) => {
            let d = source.diag(&span, message);
            match key_before(&source.text, span.start) {
                Some(key) => d.with_key(key),
                None => d,
            }
        }
        None => Diagnostic::new(&source.name, message),
    };
    if !help.is_empty() {
        d = d.with_help(help);
    }
    d
}

/// The key whose value starts at `offset` (`key = value` on the same line), if any.
fn key_before(text: &str, offset: usize) -> Option<String> {
    let head = text.get(..offset)?;
    let line = head.rsplit('\n').next()?;
    let before_value = line.trim_end().strip_suffix('=')?;
    let key: String = before_value
        .trim_end()
        .chars()
        .rev()
        .take_while(|c| c.is_alphanumeric() || *c == '_' || *c == '-')
        .collect::<Vec<_>>()
        .into_iter()
        .rev()
        .collect();
    (!key.is_empty()).then_some(key)
}

/// Locates a table's `check()` message in its file: the line holding the figure the
/// message quotes (and the key it names first, where that is a key of the file), with
/// the key the figure stands at. `check()` works on parsed values, which carry no position.
fn locate_check_problem(source: &Source, message: &str) -> Diagnostic {
    let token_char = |c: char| c.is_alphanumeric() || matches!(c, '.' | '-' | '_' | '+');
    let words: Vec<&str> = message
        .split(|c: char| !token_char(c) && c != '"')
        .filter(|w| !w.is_empty())
        .collect();
    // The figure quoted: the first number, nan/inf, or quoted word.
    let needle = words.iter().find_map(|w| {
        let w = w.trim_matches('"');
        let lower = w.to_ascii_lowercase();
        let numeric = w.parse::<f64>().is_ok() && !w.is_empty();
        (numeric
            || lower == "nan"
            || lower == "inf"
            || w.len() > 2 && message.contains(&format!("\"{w}\"")))
        .then(|| w.to_string())
    });
    let lead = message
        .split(':')
        .next()
        .unwrap_or("")
        .split_whitespace()
        .next()
        .unwrap_or("");
    let has_token = |line: &str, token: &str| {
        line.split(|c: char| !token_char(c))
            .any(|t| t.eq_ignore_ascii_case(token))
    };
    let plain = || Diagnostic::new(&source.name, message.to_string());
    let Some(needle) = needle else { return plain() };
    let lead_is_key = !lead.is_empty()
        && source
            .text
            .lines()
            .any(|l| l.contains(&format!("{lead} =")) || l.contains(&format!("{lead}=")));
    let found = source.text.lines().enumerate().find(|(_, l)| {
        let code = l.split('#').next().unwrap_or("");
        has_token(code, &needle) && (!lead_is_key || has_token(code, lead))
    });
    let Some((index, line)) = found else {
        return plain();
    };
    let code = line.split('#').next().unwrap_or("");
    let first_key = code
        .split('=')
        .next()
        .and_then(|k| {
            k.trim()
                .trim_start_matches(['{', '[', ' '])
                .split_whitespace()
                .last()
        })
        .unwrap_or("");
    // The needle as a whole token ("inf" is not the one inside "reinforced").
    let at = code
        .match_indices(needle.as_str())
        .map(|(i, _)| i)
        .find(|&i| {
            let before = code[..i].chars().next_back().is_none_or(|c| !token_char(c));
            let after = code[i + needle.len()..]
                .chars()
                .next()
                .is_none_or(|c| !token_char(c));
            before && after
        })
        .unwrap_or(0);
    let near_key = key_before(code, at.min(code.len())).unwrap_or_default();
    let key = match (first_key, near_key.as_str()) {
        (f, n) if !n.is_empty() && n != f => format!("{f}.{n}"),
        (f, _) => f.to_string(),
    };
    Diagnostic {
        line: Some(index + 1),
        column: Some(at + 1),
        ..plain()
    }
    .with_key(key)
}

/// The files a house rule folder contributes: every `*.toml` entry that is not a folder, in
/// the folder and its `checks/` subfolder, sorted by name so that loading is deterministic.
/// A named pipe or device with such a name is listed too, so that reading it fails with a
/// message instead of it being skipped without a word.
pub fn house_rule_files(dir: &Path) -> Vec<std::path::PathBuf> {
    let mut paths = Vec::new();
    for folder in [dir.to_path_buf(), dir.join("checks")] {
        let Ok(entries) = std::fs::read_dir(&folder) else {
            continue;
        };
        paths.extend(
            entries
                .filter_map(|e| e.ok().map(|e| e.path()))
                .filter(|p| p.extension().is_some_and(|x| x == "toml") && !p.is_dir()),
        );
    }
    paths.sort();
    paths
}

/// Every file of `house_rule_files`, read.
fn read_folder(dir: &Path) -> Result<Vec<(String, Source)>, Problems> {
    let shown = dir.display().to_string();
    if !dir.is_dir() {
        return Err(Diagnostic::new(&shown, "is not a folder of rule files").into());
    }
    let mut out = Vec::new();
    for path in house_rule_files(dir) {
        let name = path.display().to_string();
        let text = crate::read_text(&path, &name)?;
        let inside = path
            .strip_prefix(dir)
            .map(|p| p.display().to_string())
            .unwrap_or_else(|_| name.clone());
        out.push((inside, Source::new(name, text)));
    }
    Ok(out)
}
