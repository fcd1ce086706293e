//! One derivation type for every figure of every area: the value, its formula, inputs and
//! steps (each citing the rule table it read), the verdict of the comparison it is judged
//! by, and the input keys it rests on; and one check-input mechanism ([`Suspicious`]) that
//! turns a `pass` resting on an implausible input into `check-input`.

use std::borrow::Cow;
use std::collections::BTreeSet;

use serde::{Serialize, Serializer};

/// One step of a derivation: what was done, and the rule table it came from.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Step {
    pub rule: Option<String>,
    pub text: String,
}

impl Step {
    /// A step citing the rule table it read (`Some(id)`), or a plain one (`None`).
    pub fn new(rule: Option<&str>, text: impl Into<String>) -> Step {
        Step {
            rule: rule.map(str::to_string),
            text: text.into(),
        }
    }
}

/// The verdict on a figure judged against a requirement, a limit or a rating. Every area
/// uses these words; a barrier is never `not-judged` and a power-entry or EMC figure is
/// never `incomplete`, so each area's JSON keeps the words it always had.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Verdict {
    Pass,
    Fail,
    /// A barrier with a distance not yet declared.
    Incomplete,
    /// Judged against nothing: the rating or limit is not declared, or the figure could
    /// not be computed.
    NotJudged,
    /// The comparison passes, but the figure rests on an input flagged implausible
    /// (`input.suspicious_value`): check that input first. Never `pass`.
    CheckInput,
}

impl Verdict {
    /// `Fail` when `fails` is true, `Pass` when false, `NotJudged` without a comparison.
    pub fn of(fails: Option<bool>) -> Self {
        match fails {
            Some(true) => Verdict::Fail,
            Some(false) => Verdict::Pass,
            None => Verdict::NotJudged,
        }
    }

    /// The word the JSON and the reports use.
    pub fn as_str(self) -> &'static str {
        match self {
            Verdict::Pass => "pass",
            Verdict::Fail => "fail",
            Verdict::Incomplete => "incomplete",
            Verdict::NotJudged => "not-judged",
            Verdict::CheckInput => "check-input",
        }
    }
}

/// One input of a figure: its symbol, value, unit and where it came from.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Input {
    pub symbol: String,
    pub value: f64,
    pub unit: String,
    pub from: String,
}

/// A figure with everything needed to re-derive it by hand. Power entry serialises it
/// whole; a barrier's clearance and creepage and the EMC topics serialise only their
/// steps (`steps_only`), the shape their JSON has always had.
#[derive(Debug, Clone, PartialEq, Default, Serialize)]
pub struct Derivation {
    /// Stable id, e.g. `power_entry.inrush_peak_a`, `pri-sec.clearance`, `emc.dm_corner`;
    /// `gapwarden explain` takes it.
    pub id: String,
    // Words and keys are mostly fixed text: borrowed, they cost a large design nothing.
    pub title: Cow<'static, str>,
    /// Null when it cannot be computed (the steps say why) or the topic has no one value.
    pub value: Option<f64>,
    pub unit: Cow<'static, str>,
    pub formula: String,
    pub inputs: Vec<Input>,
    /// What the figure is judged against, in words (the check compares).
    pub judged_against: Option<String>,
    /// The verdict of that comparison, made on the unrounded figures; null when the
    /// figure is not judged against anything.
    pub verdict: Option<Verdict>,
    /// Project keys (prefixes, as the reader names them) the figure rests on; an
    /// implausible one among them turns a `pass` into `check-input` ([`Suspicious`]).
    pub rests_on: Vec<Cow<'static, str>>,
    pub steps: Vec<Step>,
    /// Where `value` is null: why, in words (for instance, which standard provides it).
    pub not_computed_because: Option<String>,
}

impl Derivation {
    /// An empty derivation with its id and title; the rest is filled in as it is derived.
    pub fn new(id: impl Into<String>, title: impl Into<Cow<'static, str>>) -> Self {
        Derivation {
            id: id.into(),
            title: title.into(),
            ..Derivation::default()
        }
    }

    /// The steps, in order.
    pub fn iter(&self) -> std::slice::Iter<'_, Step> {
        self.steps.iter()
    }

    /// Adds a step.
    pub fn push(&mut self, step: Step) {
        self.steps.push(step);
    }
}

impl<'a> IntoIterator for &'a Derivation {
    type Item = &'a Step;
    type IntoIter = std::slice::Iter<'a, Step>;
    fn into_iter(self) -> Self::IntoIter {
        self.steps.iter()
    }
}

/// Serialises a derivation as its list of steps (`serialize_with`), for the JSON fields
/// that have always been such a list (a barrier's `derivation.clearance`, EMC's
/// `derivation.noise`, ...).
pub fn steps_only<S: Serializer>(d: &Derivation, s: S) -> Result<S::Ok, S::Error> {
    d.steps.serialize(s)
}

/// The input keys flagged implausible (`input.suspicious_value`), indexed so that asking
/// about a figure costs a lookup per key prefix it rests on, however many warnings there
/// are: a large design with an implausible value on every barrier stays linear.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Suspicious {
    keys: BTreeSet<String>,
}

impl Suspicious {
    /// From the keys of the reader's warnings (as `project.warnings` names them).
    pub fn new<'a>(keys: impl IntoIterator<Item = &'a str>) -> Self {
        Suspicious {
            keys: keys.into_iter().map(str::to_string).collect(),
        }
    }

    /// From the project's warnings.
    pub fn of(warnings: &[crate::diag::Diagnostic]) -> Self {
        Self::new(warnings.iter().filter_map(|w| w.key.as_deref()))
    }

    /// Whether a flagged key falls under one of the prefixes: a prefix ending in `.` or
    /// `_` covers every key that starts with it (`environment.`, `emc.switch_node_`);
    /// any other covers itself and what lies below it (`input` covers
    /// `input.fuse.rated_a`, `part` covers `part[2].capacitance_nf`, `barrier[1]` covers
    /// `barrier[1].creepage_mm` but not `barrier[12].creepage_mm`).
    pub fn covers<S: AsRef<str>>(&self, prefixes: &[S]) -> bool {
        prefixes.iter().any(|p| {
            let p = p.as_ref();
            self.keys
                .range::<str, _>((std::ops::Bound::Included(p), std::ops::Bound::Unbounded))
                .take_while(|key| key.starts_with(p))
                .any(|key| {
                    p.ends_with('_')
                        || p.ends_with('.')
                        || key.len() == p.len()
                        || matches!(key.as_bytes().get(p.len()), Some(b'.') | Some(b'['))
                })
        })
    }

    /// `check-input` for a `pass` that rests on a flagged key; any other verdict as it is.
    pub fn settle<S: AsRef<str>>(&self, verdict: Verdict, rests_on: &[S]) -> Verdict {
        if verdict == Verdict::Pass && self.covers(rests_on) {
            Verdict::CheckInput
        } else {
            verdict
        }
    }

    /// Settles a derivation's own verdict by its own `rests_on`.
    pub fn settle_derivation(&self, d: &mut Derivation) {
        if let Some(v) = d.verdict {
            d.verdict = Some(self.settle(v, &d.rests_on));
        }
    }

    pub fn is_empty(&self) -> bool {
        self.keys.is_empty()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_prefix_covers_itself_and_what_lies_below_it_only() {
        let s = Suspicious::new([
            "barrier[12].creepage_mm",
            "input.fuse.rated_a",
            "mains.nominal_v",
        ]);
        assert!(!s.covers(&["barrier[1]"]), "barrier[1] is not barrier[12]");
        assert!(s.covers(&["barrier[12]"]));
        assert!(s.covers(&["input"]));
        assert!(s.covers(&["input.fuse."]));
        assert!(!s.covers(&["input.fuse.rated"]), "rated is not rated_a");
        assert!(s.covers(&["mains.nominal_v"]));
        assert!(!s.covers(&["mains.nominal"]));
        assert!(
            s.covers(&["mains.nominal_"]),
            "a prefix ending in _ covers what follows"
        );
        assert!(!s.covers::<&str>(&[]));
    }

    #[test]
    fn only_a_pass_becomes_check_input() {
        let s = Suspicious::new(["environment.altitude_m"]);
        let on = ["environment."];
        assert_eq!(s.settle(Verdict::Pass, &on), Verdict::CheckInput);
        assert_eq!(s.settle(Verdict::Fail, &on), Verdict::Fail);
        assert_eq!(s.settle(Verdict::Incomplete, &on), Verdict::Incomplete);
        assert_eq!(s.settle(Verdict::NotJudged, &on), Verdict::NotJudged);
        assert_eq!(s.settle(Verdict::Pass, &["mains."]), Verdict::Pass);
    }
}
