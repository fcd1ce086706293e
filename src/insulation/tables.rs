//! Typed forms of the insulation area's rule tables, with the checks that make a table usable: rows in
//! ascending order, no negative figures, every row as wide as the column list.

use serde::Deserialize;

use crate::rules::table::{Table, ascending, non_negative};

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ImpulseRow {
    pub up_to_v: f64,
    pub ovc_i: f64,
    pub ovc_ii: f64,
    pub ovc_iii: f64,
    pub ovc_iv: f64,
    pub confirmed: bool,
}

impl ImpulseRow {
    /// Rated impulse voltage for an overvoltage category, indexed I = 0 to IV = 3.
    pub fn by_category(&self, index: usize) -> f64 {
        [self.ovc_i, self.ovc_ii, self.ovc_iii, self.ovc_iv][index.min(3)]
    }
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ImpulseTable {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    /// A house table that replaces a shipped one says so.
    #[serde(default)]
    pub overrides: bool,
    pub rows: Vec<ImpulseRow>,
}

impl ImpulseTable {
    pub const ID: &'static str = "iec60664-1.impulse";
}

impl Table for ImpulseTable {
    fn check(&self) -> Result<(), String> {
        ascending(self.rows.iter().map(|r| r.up_to_v), "up_to_v")?;
        for i in 0..4 {
            ascending(
                self.rows.iter().map(|r| r.by_category(i)),
                "rated impulse voltages",
            )?;
        }
        Ok(())
    }
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ClearanceRow {
    pub impulse_kv: f64,
    pub case_a_mm: f64,
    pub case_b_mm: f64,
    /// Case A in the pollution degree 2 column where the table shows more than the PD1 value
    /// and the 0.2 mm minimum (an open point of a reproduction, taken as the larger).
    #[serde(default)]
    pub case_a_pd2_mm: Option<f64>,
    /// Which columns of this row were compared with a reproduction ("case_a", "case_b").
    #[serde(default)]
    pub confirmed: Vec<String>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ClearanceTable {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    /// A house table that replaces a shipped one says so.
    #[serde(default)]
    pub overrides: bool,
    /// Minimum clearance by pollution degree 1, 2, 3.
    pub pollution_degree_minimum_mm: [f64; 3],
    pub interpolation_permitted: bool,
    pub rows: Vec<ClearanceRow>,
}

impl ClearanceTable {
    pub const ID: &'static str = "iec60664-1.clearance";
}

impl Table for ClearanceTable {
    fn check(&self) -> Result<(), String> {
        ascending(self.rows.iter().map(|r| r.impulse_kv), "impulse_kv")?;
        non_negative(
            self.rows
                .iter()
                .flat_map(|r| [r.case_a_mm, r.case_b_mm])
                .chain(self.rows.iter().filter_map(|r| r.case_a_pd2_mm)),
            "clearances",
        )?;
        non_negative(
            self.pollution_degree_minimum_mm.iter().copied(),
            "pollution_degree_minimum_mm",
        )
    }
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SteadyStateRow {
    pub peak_kv: f64,
    /// Absent where the table has no Case A value (above 50 kV).
    #[serde(default)]
    pub case_a_mm: Option<f64>,
    pub case_b_mm: f64,
    /// Which columns of this row were compared with a reproduction ("case_a", "case_b").
    #[serde(default)]
    pub confirmed: Vec<String>,
}

/// Clearances for steady-state, temporary and recurring peak voltages (IEC 60664-1 Table F.8).
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SteadyStateClearanceTable {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    /// A house table that replaces a shipped one says so.
    #[serde(default)]
    pub overrides: bool,
    /// Minimum clearance by pollution degree 1, 2, 3.
    pub pollution_degree_minimum_mm: [f64; 3],
    /// Reinforced insulation reads the table at this multiple of the peak.
    pub reinforced_peak_factor: f64,
    pub rows: Vec<SteadyStateRow>,
}

impl SteadyStateClearanceTable {
    pub const ID: &'static str = "iec60664-1.steady-state-clearance";
}

impl Table for SteadyStateClearanceTable {
    fn check(&self) -> Result<(), String> {
        ascending(self.rows.iter().map(|r| r.peak_kv), "peak_kv")?;
        non_negative(
            self.rows
                .iter()
                .flat_map(|r| [r.case_a_mm.unwrap_or(0.0), r.case_b_mm])
                .chain(self.pollution_degree_minimum_mm.iter().copied()),
            "clearances",
        )?;
        // Case A must be a run of rows from the first: a gap would be read as "beyond the
        // table" in the middle of it.
        if let Some(gap) = self
            .rows
            .windows(2)
            .find(|w| w[0].case_a_mm.is_none() && w[1].case_a_mm.is_some())
        {
            return Err(format!(
                "peak_kv {}: case_a_mm follows a row without one; Case A must run from the first row without gaps",
                gap[1].peak_kv
            ));
        }
        if !(self.reinforced_peak_factor.is_finite() && self.reinforced_peak_factor >= 1.0) {
            return Err(format!(
                "reinforced_peak_factor {}: it must be finite and at least 1",
                self.reinforced_peak_factor
            ));
        }
        Ok(())
    }
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CreepageRow {
    pub working_rms_v: f64,
    pub mm: Vec<f64>,
    pub confirmed: bool,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CreepageTable {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    /// A house table that replaces a shipped one says so.
    #[serde(default)]
    pub overrides: bool,
    pub columns: Vec<String>,
    pub interpolation_round_up_mm: f64,
    pub rows: Vec<CreepageRow>,
}

impl CreepageTable {
    pub const ID: &'static str = "iec60664-1.creepage";
    /// The column names the engine selects from, in the order the file must give them.
    pub const COLUMNS: [&'static str; 9] = [
        "printed_pd1",
        "printed_pd2",
        "pd1",
        "pd2_group_i",
        "pd2_group_ii",
        "pd2_group_iii",
        "pd3_group_i",
        "pd3_group_ii",
        "pd3_group_iii",
    ];
}

impl Table for CreepageTable {
    fn check(&self) -> Result<(), String> {
        if self.columns != Self::COLUMNS {
            return Err(format!("columns must be {:?}", Self::COLUMNS));
        }
        ascending(self.rows.iter().map(|r| r.working_rms_v), "working_rms_v")?;
        for row in &self.rows {
            if row.mm.len() != Self::COLUMNS.len() {
                return Err(format!(
                    "row {} V has {} values; expected {}",
                    row.working_rms_v,
                    row.mm.len(),
                    Self::COLUMNS.len()
                ));
            }
            non_negative(row.mm.iter().copied(), "creepage distances")?;
        }
        if !(self.interpolation_round_up_mm > 0.0 && self.interpolation_round_up_mm.is_finite()) {
            return Err("interpolation_round_up_mm must be above 0".to_string());
        }
        Ok(())
    }
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ReinforcedRule {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    /// A house table that replaces a shipped one says so.
    #[serde(default)]
    pub overrides: bool,
    pub preferred_impulse_v: Vec<f64>,
    pub non_preferred_impulse_factor: f64,
    pub creepage_factor: f64,
}

impl ReinforcedRule {
    pub const ID: &'static str = "iec60664-1.reinforced";
}

impl Table for ReinforcedRule {
    fn check(&self) -> Result<(), String> {
        ascending(
            self.preferred_impulse_v.iter().copied(),
            "preferred_impulse_v",
        )?;
        let usable = |f: f64| f.is_finite() && f >= 1.0;
        if !usable(self.non_preferred_impulse_factor) || !usable(self.creepage_factor) {
            return Err(
                "the factors for reinforced insulation must be finite and at least 1".to_string(),
            );
        }
        Ok(())
    }
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AltitudeRow {
    pub altitude_m: f64,
    pub factor: f64,
    /// How this row was checked ("confirmed ...", "from memory").
    #[serde(default)]
    pub provenance: Option<String>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AltitudeTable {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    /// A house table that replaces a shipped one says so.
    #[serde(default)]
    pub overrides: bool,
    pub rows: Vec<AltitudeRow>,
}

impl AltitudeTable {
    pub const ID: &'static str = "iec60664-1.altitude";
}

impl Table for AltitudeTable {
    fn check(&self) -> Result<(), String> {
        ascending(self.rows.iter().map(|r| r.altitude_m), "altitude_m")?;
        let mut last = 0.0;
        for r in &self.rows {
            if !(r.factor >= 1.0 && r.factor >= last && r.factor.is_finite()) {
                return Err(format!(
                    "factor {} at {} m: factors must be at least 1 and never fall",
                    r.factor, r.altitude_m
                ));
            }
            last = r.factor;
        }
        Ok(())
    }
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct GrooveTable {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    /// A house table that replaces a shipped one says so.
    #[serde(default)]
    pub overrides: bool,
    /// Narrowest groove that counts, by pollution degree 1, 2, 3.
    pub min_width_mm: [f64; 3],
    /// Below this associated clearance the width is reduced (absent: never reduced).
    #[serde(default)]
    pub reduce_below_clearance_mm: Option<f64>,
    /// The reduced width is the associated clearance divided by this.
    #[serde(default)]
    pub reduced_divisor: Option<f64>,
}

impl GrooveTable {
    pub const ID: &'static str = "iec60664-1.grooves";
}

impl Table for GrooveTable {
    fn check(&self) -> Result<(), String> {
        non_negative(self.min_width_mm.iter().copied(), "min_width_mm")?;
        non_negative(
            self.reduce_below_clearance_mm.into_iter(),
            "reduce_below_clearance_mm",
        )?;
        match (self.reduce_below_clearance_mm, self.reduced_divisor) {
            (Some(_), None) | (None, Some(_)) => Err(
                "reduce_below_clearance_mm and reduced_divisor go together: give both or neither"
                    .to_string(),
            ),
            (_, Some(d)) if !(d.is_finite() && d >= 1.0) => Err(format!(
                "reduced_divisor {d}: it must be finite and at least 1"
            )),
            _ => Ok(()),
        }
    }
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MaterialGroupEntry {
    pub group: String,
    pub min_cti: f64,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MaterialGroupTable {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    /// A house table that replaces a shipped one says so.
    #[serde(default)]
    pub overrides: bool,
    /// Groups from the best (highest CTI) down.
    pub groups: Vec<MaterialGroupEntry>,
}

impl MaterialGroupTable {
    pub const ID: &'static str = "iec60664-1.material-groups";
}

impl Table for MaterialGroupTable {
    fn check(&self) -> Result<(), String> {
        ascending(
            self.groups.iter().rev().map(|g| g.min_cti),
            "min_cti (listed from the highest down)",
        )?;
        for g in &self.groups {
            if crate::project::MaterialGroup::from_word(&g.group).is_none() {
                return Err(format!(
                    "group \"{}\" is not one of I, II, IIIa, IIIb",
                    g.group
                ));
            }
        }
        Ok(())
    }
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BoardSpacingRow {
    pub up_to_peak_v: f64,
    pub mm: Vec<f64>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BoardSpacingTable {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    /// A house table that replaces a shipped one says so.
    #[serde(default)]
    pub overrides: bool,
    pub columns: Vec<String>,
    pub rows: Vec<BoardSpacingRow>,
    pub above_last_row_mm_per_v: Vec<f64>,
}

impl BoardSpacingTable {
    pub const ID: &'static str = "ipc2221b.conductor-spacing";
    pub const COLUMNS: [&'static str; 7] = ["B1", "B2", "B3", "B4", "A5", "A6", "A7"];
}

impl Table for BoardSpacingTable {
    fn check(&self) -> Result<(), String> {
        if self.columns != Self::COLUMNS {
            return Err(format!("columns must be {:?}", Self::COLUMNS));
        }
        ascending(self.rows.iter().map(|r| r.up_to_peak_v), "up_to_peak_v")?;
        for row in self
            .rows
            .iter()
            .map(|r| &r.mm)
            .chain([&self.above_last_row_mm_per_v])
        {
            if row.len() != Self::COLUMNS.len() {
                return Err(format!(
                    "a row has {} values; expected {}",
                    row.len(),
                    Self::COLUMNS.len()
                ));
            }
            non_negative(row.iter().copied(), "spacings")?;
        }
        Ok(())
    }
}

/// Figures by insulation grade (house minimums, tape layers).
#[derive(Debug, Clone, Copy, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct ByGrade {
    pub functional: f64,
    pub basic: f64,
    pub supplementary: f64,
    pub reinforced: f64,
    pub double: f64,
}

impl ByGrade {
    pub fn get(&self, grade: crate::project::Grade) -> f64 {
        use crate::project::Grade::*;
        match grade {
            Functional => self.functional,
            Basic => self.basic,
            Supplementary => self.supplementary,
            Reinforced => self.reinforced,
            Double => self.double,
        }
    }

    fn all(&self) -> [f64; 5] {
        [
            self.functional,
            self.basic,
            self.supplementary,
            self.reinforced,
            self.double,
        ]
    }
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MinimumDistances {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    #[serde(default)]
    pub overrides: bool,
    pub clearance_mm: ByGrade,
    pub creepage_mm: ByGrade,
}

impl MinimumDistances {
    pub const ID: &'static str = "limits.minimum-distances";
}

impl Table for MinimumDistances {
    fn check(&self) -> Result<(), String> {
        non_negative(
            self.clearance_mm
                .all()
                .into_iter()
                .chain(self.creepage_mm.all()),
            "minimum distances",
        )
    }
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CapacitorSubclass {
    pub subclass: String,
    pub bridges: Vec<String>,
    pub max_rated_ac_v: Option<f64>,
    pub impulse_test_v: f64,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CapacitorSubclasses {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    #[serde(default)]
    pub overrides: bool,
    pub subclasses: Vec<CapacitorSubclass>,
    pub series_count_for_reinforced: u32,
}

impl CapacitorSubclasses {
    pub const ID: &'static str = "iec60384-14.subclasses";
}

impl Table for CapacitorSubclasses {
    fn check(&self) -> Result<(), String> {
        for s in &self.subclasses {
            if let Some(v) = s.max_rated_ac_v {
                non_negative(std::iter::once(v), "max_rated_ac_v")?;
            }
        }
        if self.series_count_for_reinforced < 2 {
            return Err(format!(
                "series_count_for_reinforced = {}: it must be at least 2 (capacitors in series standing for one across reinforced insulation)",
                self.series_count_for_reinforced
            ));
        }
        for s in &self.subclasses {
            for g in &s.bridges {
                if crate::project::Grade::from_word(g).is_none() {
                    return Err(format!(
                        "subclass {}: \"{g}\" is not an insulation grade",
                        s.subclass
                    ));
                }
            }
        }
        non_negative(
            self.subclasses.iter().map(|s| s.impulse_test_v),
            "impulse_test_v",
        )
    }
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TestVoltageRow {
    pub up_to_peak_v: f64,
    pub basic_v_rms: f64,
    pub reinforced_v_rms: f64,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TestVoltages {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    #[serde(default)]
    pub overrides: bool,
    pub rows: Vec<TestVoltageRow>,
    /// Where the test voltage comes from above the last row, in words.
    #[serde(default)]
    pub above_last_row: Option<String>,
}

impl TestVoltages {
    pub const ID: &'static str = "iec60950-1.test-voltages";
}

impl Table for TestVoltages {
    fn check(&self) -> Result<(), String> {
        ascending(self.rows.iter().map(|r| r.up_to_peak_v), "up_to_peak_v")?;
        non_negative(
            self.rows
                .iter()
                .flat_map(|r| [r.basic_v_rms, r.reinforced_v_rms]),
            "test voltages",
        )
    }
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ThermalClass {
    pub class: String,
    pub max_c: f64,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ThermalClasses {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    #[serde(default)]
    pub overrides: bool,
    pub classes: Vec<ThermalClass>,
}

impl ThermalClasses {
    pub const ID: &'static str = "iec60085.thermal-classes";
}

impl Table for ThermalClasses {
    fn check(&self) -> Result<(), String> {
        ascending(self.classes.iter().map(|c| c.max_c), "max_c")
    }
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SolidInsulation {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    #[serde(default)]
    pub overrides: bool,
    pub min_distance_through_insulation_mm: f64,
    pub min_tape_layers: ByGrade,
    pub margins_cover_creepage: bool,
}

impl SolidInsulation {
    pub const ID: &'static str = "iec60950-1.solid-insulation";
}

impl Table for SolidInsulation {
    fn check(&self) -> Result<(), String> {
        non_negative(
            std::iter::once(self.min_distance_through_insulation_mm)
                .chain(self.min_tape_layers.all()),
            "solid insulation figures",
        )
    }
}
