//! The rule tables power entry reads (`rules/power-entry-*.toml`), typed, with the checks
//! that make each usable. The electric strength test voltages are the shared table
//! `iec60950-1.test-voltages` of the rule book, read from there.

use serde::Deserialize;

use crate::rules::Table;

/// One figure with the published source (or "common practice") it comes from.
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct Sourced {
    pub value: f64,
    pub source: String,
}

fn positive(s: &Sourced, what: &str) -> Result<(), String> {
    if s.value.is_finite() && s.value > 0.0 {
        Ok(())
    } else {
        Err(format!(
            "{what}: {} is not a finite figure above 0",
            s.value
        ))
    }
}

#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct PulseFactor {
    /// "fast" or "time-lag".
    pub speed: String,
    pub factor: f64,
    pub source: String,
}

/// Fuse derating, pulse factor by speed and the prospective fault current assumed.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FuseRules {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    #[serde(default)]
    pub overrides: bool,
    pub derating: Sourced,
    #[serde(default)]
    pub pulse_factors: Vec<PulseFactor>,
    pub default_prospective_fault_a: Sourced,
}

impl FuseRules {
    pub fn pulse_factor(&self, speed: &str) -> Option<&PulseFactor> {
        self.pulse_factors.iter().find(|p| p.speed == speed)
    }
}

impl Table for FuseRules {
    const ID: &'static str = "power-entry.fuse";

    fn check(&self) -> Result<(), String> {
        positive(&self.derating, "derating")?;
        if self.derating.value > 1.0 {
            return Err(format!(
                "derating: {} is above 1; it is the fraction of the rating the fuse may carry",
                self.derating.value
            ));
        }
        positive(
            &self.default_prospective_fault_a,
            "default_prospective_fault_a",
        )?;
        for (i, p) in self.pulse_factors.iter().enumerate() {
            if crate::diag::word::<super::FuseSpeed>(&p.speed).is_none() {
                return Err(format!(
                    "pulse_factors[{}]: speed \"{}\" is not \"fast\" or \"time-lag\"",
                    i + 1,
                    p.speed
                ));
            }
            if !(p.factor.is_finite() && p.factor >= 1.0) {
                return Err(format!(
                    "pulse_factors[{}]: factor {} must be finite and at least 1",
                    i + 1,
                    p.factor
                ));
            }
            if self.pulse_factors[..i].iter().any(|q| q.speed == p.speed) {
                return Err(format!(
                    "pulse_factors: speed \"{}\" is given twice",
                    p.speed
                ));
            }
        }
        Ok(())
    }
}

#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct DischargeLimit {
    /// "plug", "industrial-plug" or "permanent".
    pub connection: String,
    pub max_time_constant_s: f64,
    pub source: String,
}

/// X-capacitor discharge: the capacitance above which it applies, the time-constant limit
/// by connection, and when the residual voltage is reported.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DischargeRules {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    #[serde(default)]
    pub overrides: bool,
    pub threshold_uf: Sourced,
    #[serde(default)]
    pub limits: Vec<DischargeLimit>,
    pub residual_after_s: Sourced,
    /// Not shipped: a house rule may set a limit on the residual voltage (it then holds
    /// under every standard).
    #[serde(default)]
    pub residual_limit_v: Option<Sourced>,
    /// A residual-voltage limit by end-product standard (the touch-current table's ids).
    #[serde(default)]
    pub residual_limits: Vec<ResidualLimit>,
    /// Connections to which no discharge limit applies, with the reason.
    #[serde(default)]
    pub not_applicable: Vec<NotApplicable>,
}

/// The residual-voltage limit one end-product standard sets after disconnection.
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct ResidualLimit {
    pub standard: String,
    pub limit_v: f64,
    pub source: String,
    /// The connections (`input.connection`) it applies to; the others are not carried.
    pub connections: Vec<String>,
}

/// A connection the discharge limit does not apply to, and why.
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct NotApplicable {
    pub connection: String,
    pub reason: String,
    pub source: String,
}

/// How the equipment is connected to the mains (`input.connection`).
/// The connections a limit may be given for: those of the project file.
fn connections() -> Vec<String> {
    crate::diag::words::<super::Connection>()
}

impl DischargeRules {
    pub fn limit(&self, connection: &str) -> Option<&DischargeLimit> {
        self.limits.iter().find(|l| l.connection == connection)
    }

    pub fn not_applicable(&self, connection: &str) -> Option<&NotApplicable> {
        self.not_applicable
            .iter()
            .find(|l| l.connection == connection)
    }
}

impl Table for DischargeRules {
    const ID: &'static str = "power-entry.x-discharge";

    fn check(&self) -> Result<(), String> {
        positive(&self.threshold_uf, "threshold_uf")?;
        positive(&self.residual_after_s, "residual_after_s")?;
        if let Some(limit) = &self.residual_limit_v {
            positive(limit, "residual_limit_v")?;
        }
        if let Some(l) = self
            .residual_limits
            .iter()
            .find(|l| !l.limit_v.is_finite() || l.limit_v <= 0.0)
        {
            return Err(format!(
                "residual_limits: {} is not a positive figure",
                l.limit_v
            ));
        }
        for (i, x) in self.not_applicable.iter().enumerate() {
            if !connections().contains(&x.connection) {
                return Err(format!(
                    "not_applicable[{}]: connection \"{}\" is not one of {}",
                    i + 1,
                    x.connection,
                    connections().join(", ")
                ));
            }
            if self.limit(&x.connection).is_some() {
                return Err(format!(
                    "not_applicable[{}]: connection \"{}\" also has a limit",
                    i + 1,
                    x.connection
                ));
            }
        }
        for (i, l) in self.limits.iter().enumerate() {
            if !connections().contains(&l.connection) {
                return Err(format!(
                    "limits[{}]: connection \"{}\" is not one of {}",
                    i + 1,
                    l.connection,
                    connections().join(", ")
                ));
            }
            if !(l.max_time_constant_s.is_finite() && l.max_time_constant_s > 0.0) {
                return Err(format!(
                    "limits[{}]: max_time_constant_s {} is not a finite figure above 0",
                    i + 1,
                    l.max_time_constant_s
                ));
            }
            if self.limits[..i]
                .iter()
                .any(|m| m.connection == l.connection)
            {
                return Err(format!(
                    "limits: connection \"{}\" is given twice",
                    l.connection
                ));
            }
        }
        Ok(())
    }
}

#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct StandardEntry {
    pub id: String,
    pub title: String,
}

#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct TouchLimit {
    pub standard: String,
    /// "not-earthed", "earthed-hand-held" or "earthed".
    pub part: String,
    pub limit_ma: f64,
    pub source: String,
    pub confirmed: bool,
}

/// Touch current limits by end-product standard and kind of accessible part.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TouchRules {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    #[serde(default)]
    pub overrides: bool,
    pub default_standard: String,
    pub standards: Vec<StandardEntry>,
    #[serde(default)]
    pub limits: Vec<TouchLimit>,
}

/// The kinds of accessible part a touch-current limit is given for.
pub const TOUCH_PARTS: [&str; 3] = ["not-earthed", "earthed-hand-held", "earthed"];

impl TouchRules {
    pub fn standard(&self, id: &str) -> Option<&StandardEntry> {
        self.standards.iter().find(|s| s.id == id)
    }

    pub fn limit(&self, standard: &str, part: &str) -> Option<&TouchLimit> {
        self.limits
            .iter()
            .find(|l| l.standard == standard && l.part == part)
    }
}

impl Table for TouchRules {
    const ID: &'static str = "power-entry.touch-current";

    fn check(&self) -> Result<(), String> {
        if self.standards.is_empty() {
            return Err("standards: at least one end-product standard is needed".to_string());
        }
        for (i, s) in self.standards.iter().enumerate() {
            if s.id.trim().is_empty() {
                return Err(format!("standards[{}]: id is empty", i + 1));
            }
            if self.standards[..i].iter().any(|t| t.id == s.id) {
                return Err(format!("standards: \"{}\" is given twice", s.id));
            }
        }
        if self.standard(&self.default_standard).is_none() {
            return Err(format!(
                "default_standard \"{}\" is not one of the standards listed",
                self.default_standard
            ));
        }
        for (i, l) in self.limits.iter().enumerate() {
            if self.standard(&l.standard).is_none() {
                return Err(format!(
                    "limits[{}]: standard \"{}\" is not one of the standards listed",
                    i + 1,
                    l.standard
                ));
            }
            if !TOUCH_PARTS.contains(&l.part.as_str()) {
                return Err(format!(
                    "limits[{}]: part \"{}\" is not one of {}",
                    i + 1,
                    l.part,
                    TOUCH_PARTS.join(", ")
                ));
            }
            if !(l.limit_ma.is_finite() && l.limit_ma > 0.0) {
                return Err(format!(
                    "limits[{}]: limit_ma {} is not a finite figure above 0",
                    i + 1,
                    l.limit_ma
                ));
            }
            if self.limits[..i]
                .iter()
                .any(|m| m.standard == l.standard && m.part == l.part)
            {
                return Err(format!(
                    "limits: {} / {} is given twice",
                    l.standard, l.part
                ));
            }
        }
        Ok(())
    }
}

/// The mains range assumed where `[mains]` leaves part of it out.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MainsDefaults {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    #[serde(default)]
    pub overrides: bool,
    pub tolerance: Sourced,
    pub low_frequency_hz: Sourced,
    pub high_frequency_hz: Sourced,
}

impl Table for MainsDefaults {
    const ID: &'static str = "power-entry.mains-defaults";

    fn check(&self) -> Result<(), String> {
        positive(&self.low_frequency_hz, "low_frequency_hz")?;
        positive(&self.high_frequency_hz, "high_frequency_hz")?;
        if self.low_frequency_hz.value > self.high_frequency_hz.value {
            return Err("low_frequency_hz is above high_frequency_hz".to_string());
        }
        if !(self.tolerance.value.is_finite()
            && self.tolerance.value >= 0.0
            && self.tolerance.value < 1.0)
        {
            return Err(format!(
                "tolerance: {} must be a fraction from 0 up to (not including) 1",
                self.tolerance.value
            ));
        }
        Ok(())
    }
}
