//! The rule book: the published tables the engine reads, loaded from TOML files in `rules/`.
//! The shipped files are embedded in the binary; a folder given with `--rules` adds tables
//! or overrides shipped ones by id. Every table names its source and provenance.

mod tables;

use std::collections::BTreeMap;
use std::path::Path;

use serde::{Deserialize, Serialize};

use crate::diag::{Diagnostic, Problems, Source};
pub use tables::*;

/// The rule files shipped with gapwarden, embedded at build time.
pub const SHIPPED: &[(&str, &str)] = &[
    (
        "iec60664-1-impulse.toml",
        include_str!("../../rules/iec60664-1-impulse.toml"),
    ),
    (
        "iec60664-1-clearance.toml",
        include_str!("../../rules/iec60664-1-clearance.toml"),
    ),
    (
        "iec60664-1-creepage.toml",
        include_str!("../../rules/iec60664-1-creepage.toml"),
    ),
    (
        "iec60664-1-reinforced.toml",
        include_str!("../../rules/iec60664-1-reinforced.toml"),
    ),
    (
        "iec60664-1-altitude.toml",
        include_str!("../../rules/iec60664-1-altitude.toml"),
    ),
    (
        "iec60664-1-grooves.toml",
        include_str!("../../rules/iec60664-1-grooves.toml"),
    ),
    (
        "iec60664-1-material-groups.toml",
        include_str!("../../rules/iec60664-1-material-groups.toml"),
    ),
    (
        "ipc2221b-conductor-spacing.toml",
        include_str!("../../rules/ipc2221b-conductor-spacing.toml"),
    ),
];

/// What a report says about one loaded table.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct RuleInfo {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    pub sha256: String,
    /// "shipped", or "house" for a table from a `--rules` folder.
    pub origin: String,
    /// File name (never a full path, so reports carry no machine paths).
    pub file: String,
    /// The file's text, for `gapwarden rules ID`.
    #[serde(skip)]
    pub text: String,
}

/// The fields every rule file carries, read leniently to learn its id.
#[derive(Deserialize)]
struct Header {
    id: String,
    title: String,
    source: String,
    provenance: String,
}

/// All loaded tables, typed.
#[derive(Debug, Clone)]
pub struct RuleBook {
    pub info: Vec<RuleInfo>,
    pub impulse: ImpulseTable,
    pub clearance: ClearanceTable,
    pub creepage: CreepageTable,
    pub reinforced: ReinforcedRule,
    pub altitude: AltitudeTable,
    pub grooves: GrooveTable,
    pub material_groups: MaterialGroupTable,
    pub board: BoardSpacingTable,
}

impl RuleBook {
    /// The shipped tables only.
    pub fn shipped() -> Result<RuleBook, Problems> {
        Self::load(None)
    }

    /// The shipped tables, with those in `house` (if given) added or overriding by id.
    pub fn load(house: Option<&Path>) -> Result<RuleBook, Problems> {
        let mut sources: BTreeMap<String, (Source, &'static str)> = BTreeMap::new();
        let mut problems = Vec::new();
        let mut add = |source: Source, origin: &'static str, problems: &mut Vec<Diagnostic>| {
            match toml::from_str::<Header>(&source.text) {
                Ok(h) => {
                    sources.insert(h.id, (source, origin));
                }
                Err(e) => problems.push(toml_problem(
                    &source,
                    &e,
                    "a rule file needs id, title, source and provenance",
                )),
            }
        };
        for (name, text) in SHIPPED {
            add(
                Source::new(format!("rules/{name}"), *text),
                "shipped",
                &mut problems,
            );
        }
        if let Some(dir) = house {
            for source in read_folder(dir)? {
                add(source, "house", &mut problems);
            }
        }
        if !problems.is_empty() {
            return Err(Problems(problems));
        }
        let mut info = Vec::new();
        for (id, (source, origin)) in &sources {
            let Ok(h) = toml::from_str::<Header>(&source.text) else {
                continue;
            };
            info.push(RuleInfo {
                id: id.clone(),
                title: h.title,
                source: h.source,
                provenance: h.provenance,
                sha256: crate::sha256_hex(source.text.as_bytes()),
                origin: origin.to_string(),
                file: crate::report::file_name(&source.name),
                text: source.text.clone(),
            });
        }
        let mut typed = Typed {
            sources: &sources,
            problems: Vec::new(),
        };
        let impulse = typed.get::<ImpulseTable>(ImpulseTable::ID);
        let clearance = typed.get::<ClearanceTable>(ClearanceTable::ID);
        let creepage = typed.get::<CreepageTable>(CreepageTable::ID);
        let reinforced = typed.get::<ReinforcedRule>(ReinforcedRule::ID);
        let altitude = typed.get::<AltitudeTable>(AltitudeTable::ID);
        let grooves = typed.get::<GrooveTable>(GrooveTable::ID);
        let material_groups = typed.get::<MaterialGroupTable>(MaterialGroupTable::ID);
        let board = typed.get::<BoardSpacingTable>(BoardSpacingTable::ID);
        if !typed.problems.is_empty() {
            return Err(Problems(typed.problems));
        }
        match (
            impulse,
            clearance,
            creepage,
            reinforced,
            altitude,
            grooves,
            material_groups,
            board,
        ) {
            (
                Some(impulse),
                Some(clearance),
                Some(creepage),
                Some(reinforced),
                Some(altitude),
                Some(grooves),
                Some(material_groups),
                Some(board),
            ) => Ok(RuleBook {
                info,
                impulse,
                clearance,
                creepage,
                reinforced,
                altitude,
                grooves,
                material_groups,
                board,
            }),
            _ => Err(Problems(vec![Diagnostic::new(
                "rules",
                "a rule table could not be loaded",
            )])),
        }
    }

    pub fn info(&self, id: &str) -> Option<&RuleInfo> {
        self.info.iter().find(|i| i.id == id)
    }
}

struct Typed<'a> {
    sources: &'a BTreeMap<String, (Source, &'static str)>,
    problems: Vec<Diagnostic>,
}

impl Typed<'_> {
    fn get<T: Table>(&mut self, id: &str) -> Option<T> {
        let Some((source, _)) = self.sources.get(id) else {
            self.problems.push(Diagnostic::new(
                "rules",
                format!("no rule table with id \"{id}\" is loaded"),
            ));
            return None;
        };
        match toml::from_str::<T>(&source.text) {
            Ok(table) => match table.check() {
                Ok(()) => Some(table),
                Err(message) => {
                    self.problems
                        .push(Diagnostic::new(&source.name, message).with_key("rows"));
                    None
                }
            },
            Err(e) => {
                self.problems.push(toml_problem(source, &e, ""));
                None
            }
        }
    }
}

fn toml_problem(source: &Source, e: &toml::de::Error, help: &str) -> Diagnostic {
    let mut d = match e.span() {
        Some(span) => source.diag(&span, e.message().trim().to_string()),
        None => Diagnostic::new(&source.name, e.message().trim().to_string()),
    };
    if !help.is_empty() {
        d = d.with_help(help);
    }
    d
}

/// Every `*.toml` file in a folder, sorted by name so that loading is deterministic.
fn read_folder(dir: &Path) -> Result<Vec<Source>, Problems> {
    let shown = dir.display().to_string();
    let entries = std::fs::read_dir(dir)
        .map_err(|e| Diagnostic::new(&shown, format!("cannot read the rules folder: {e}")))?;
    let mut paths: Vec<_> = entries
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "toml") && p.is_file())
        .collect();
    paths.sort();
    let mut out = Vec::new();
    for path in paths {
        let name = path.display().to_string();
        let text = crate::read_text(&path).map_err(|m| Diagnostic::new(&name, m))?;
        out.push(Source::new(name, text));
    }
    Ok(out)
}
