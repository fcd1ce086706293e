//! Typed forms of the insulation area's rule tables, with the checks that make a table
//! usable: rows in ascending order, no negative figures, every row as wide as the column
//! list.

use serde::Deserialize;

use crate::rules::table::{Table, ascending, column, item, non_negative};

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

impl Table for ImpulseTable {
    const ID: &'static str = "iec60664-1.impulse";

    fn check(&self) -> Result<(), String> {
        ascending(self.rows.iter().map(|r| r.up_to_v), "rows", "up_to_v")?;
        for (i, key) in ["ovc_i", "ovc_ii", "ovc_iii", "ovc_iv"]
            .into_iter()
            .enumerate()
        {
            ascending(self.rows.iter().map(|r| r.by_category(i)), "rows", key)?;
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

impl Table for ClearanceTable {
    const ID: &'static str = "iec60664-1.clearance";

    fn check(&self) -> Result<(), String> {
        ascending(self.rows.iter().map(|r| r.impulse_kv), "rows", "impulse_kv")?;
        non_negative(
            column(&self.rows, "rows", "case_a_mm", |r| Some(r.case_a_mm))
                .chain(column(&self.rows, "rows", "case_b_mm", |r| {
                    Some(r.case_b_mm)
                }))
                .chain(column(&self.rows, "rows", "case_a_pd2_mm", |r| {
                    r.case_a_pd2_mm
                })),
            "clearances",
        )?;
        non_negative(
            column(
                &self.pollution_degree_minimum_mm,
                "pollution_degree_minimum_mm",
                "",
                |v| Some(*v),
            ),
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

impl Table for SteadyStateClearanceTable {
    const ID: &'static str = "iec60664-1.steady-state-clearance";

    fn check(&self) -> Result<(), String> {
        ascending(self.rows.iter().map(|r| r.peak_kv), "rows", "peak_kv")?;
        non_negative(
            column(&self.rows, "rows", "case_a_mm", |r| r.case_a_mm)
                .chain(column(&self.rows, "rows", "case_b_mm", |r| {
                    Some(r.case_b_mm)
                }))
                .chain(column(
                    &self.pollution_degree_minimum_mm,
                    "pollution_degree_minimum_mm",
                    "",
                    |v| Some(*v),
                )),
            "clearances",
        )?;
        // Case A must be a run of rows from the first: a gap would be read as "beyond the
        // table" in the middle of it.
        if let Some(i) = (1..self.rows.len())
            .find(|&i| self.rows[i - 1].case_a_mm.is_none() && self.rows[i].case_a_mm.is_some())
        {
            return Err(format!(
                "{}: the row for peak_kv {} gives case_a_mm after a row without one; Case A must run from the first row without gaps",
                item("rows", i, "case_a_mm"),
                self.rows[i].peak_kv
            ));
        }
        if !(self.reinforced_peak_factor.is_finite() && self.reinforced_peak_factor >= 1.0) {
            return Err(format!(
                "reinforced_peak_factor: {} must be finite and at least 1",
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
    const ID: &'static str = "iec60664-1.creepage";

    fn check(&self) -> Result<(), String> {
        if self.columns != Self::COLUMNS {
            return Err(format!("columns: must be {:?}", Self::COLUMNS));
        }
        ascending(
            self.rows.iter().map(|r| r.working_rms_v),
            "rows",
            "working_rms_v",
        )?;
        for (i, row) in self.rows.iter().enumerate() {
            let mm = item("rows", i, "mm");
            if row.mm.len() != Self::COLUMNS.len() {
                return Err(format!(
                    "{mm}: row {} V has {} values; expected {}",
                    row.working_rms_v,
                    row.mm.len(),
                    Self::COLUMNS.len()
                ));
            }
            non_negative(column(&row.mm, &mm, "", |v| Some(*v)), "creepage distances")?;
        }
        if !(self.interpolation_round_up_mm > 0.0 && self.interpolation_round_up_mm.is_finite()) {
            return Err("interpolation_round_up_mm: must be above 0".to_string());
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

impl Table for ReinforcedRule {
    const ID: &'static str = "iec60664-1.reinforced";

    fn check(&self) -> Result<(), String> {
        ascending(
            self.preferred_impulse_v.iter().copied(),
            "preferred_impulse_v",
            "",
        )?;
        let usable = |f: f64| f.is_finite() && f >= 1.0;
        for (key, factor) in [
            (
                "non_preferred_impulse_factor",
                self.non_preferred_impulse_factor,
            ),
            ("creepage_factor", self.creepage_factor),
        ] {
            if !usable(factor) {
                return Err(format!(
                    "{key}: {factor}: the factors for reinforced insulation must be finite and at least 1"
                ));
            }
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

impl Table for AltitudeTable {
    const ID: &'static str = "iec60664-1.altitude";

    fn check(&self) -> Result<(), String> {
        ascending(self.rows.iter().map(|r| r.altitude_m), "rows", "altitude_m")?;
        let mut last = 0.0;
        for (i, r) in self.rows.iter().enumerate() {
            if !(r.factor >= 1.0 && r.factor >= last && r.factor.is_finite()) {
                return Err(format!(
                    "{}: factor {} at {} m: factors must be at least 1 and never fall",
                    item("rows", i, "factor"),
                    r.factor,
                    r.altitude_m
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

impl Table for GrooveTable {
    const ID: &'static str = "iec60664-1.grooves";

    fn check(&self) -> Result<(), String> {
        non_negative(
            column(&self.min_width_mm, "min_width_mm", "", |v| Some(*v)),
            "min_width_mm",
        )?;
        non_negative(
            self.reduce_below_clearance_mm
                .map(|v| ("reduce_below_clearance_mm".to_string(), v))
                .into_iter(),
            "reduce_below_clearance_mm",
        )?;
        match (self.reduce_below_clearance_mm, self.reduced_divisor) {
            (Some(_), None) => Err(
                "reduce_below_clearance_mm: it goes with reduced_divisor: give both or neither"
                    .to_string(),
            ),
            (None, Some(_)) => Err(
                "reduced_divisor: it goes with reduce_below_clearance_mm: give both or neither"
                    .to_string(),
            ),
            (_, Some(d)) if !(d.is_finite() && d >= 1.0) => Err(format!(
                "reduced_divisor: {d} must be finite and at least 1"
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

impl Table for MaterialGroupTable {
    const ID: &'static str = "iec60664-1.material-groups";

    fn check(&self) -> Result<(), String> {
        // Listed from the highest CTI down: each figure below the one before.
        let mut last = f64::INFINITY;
        for (i, g) in self.groups.iter().enumerate() {
            let v = g.min_cti;
            if !v.is_finite() || v < 0.0 || v >= last {
                return Err(format!(
                    "{}: {v} must be a finite figure of 0 or more, below the one before (listed from the highest down)",
                    item("groups", i, "min_cti")
                ));
            }
            last = v;
        }
        if self.groups.is_empty() {
            return Err("groups: the table has no rows".to_string());
        }
        for (i, g) in self.groups.iter().enumerate() {
            if crate::diag::word::<crate::project::MaterialGroup>(&g.group).is_none() {
                return Err(format!(
                    "{}: \"{}\" is not one of {}",
                    item("groups", i, "group"),
                    g.group,
                    crate::diag::words::<crate::project::MaterialGroup>().join(", ")
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
    pub const COLUMNS: [&'static str; 7] = ["B1", "B2", "B3", "B4", "A5", "A6", "A7"];
}

impl Table for BoardSpacingTable {
    const ID: &'static str = "ipc2221b.conductor-spacing";

    fn check(&self) -> Result<(), String> {
        if self.columns != Self::COLUMNS {
            return Err(format!("columns: must be {:?}", Self::COLUMNS));
        }
        ascending(
            self.rows.iter().map(|r| r.up_to_peak_v),
            "rows",
            "up_to_peak_v",
        )?;
        for (path, row) in self
            .rows
            .iter()
            .enumerate()
            .map(|(i, r)| (item("rows", i, "mm"), &r.mm))
            .chain([(
                "above_last_row_mm_per_v".to_string(),
                &self.above_last_row_mm_per_v,
            )])
        {
            if row.len() != Self::COLUMNS.len() {
                return Err(format!(
                    "{path}: a row has {} values; expected {}",
                    row.len(),
                    Self::COLUMNS.len()
                ));
            }
            non_negative(column(row, &path, "", |v| Some(*v)), "spacings")?;
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

    /// Every figure with its path under `key` (`clearance_mm.basic`).
    fn all(&self, key: &str) -> [(String, f64); 5] {
        [
            (format!("{key}.functional"), self.functional),
            (format!("{key}.basic"), self.basic),
            (format!("{key}.supplementary"), self.supplementary),
            (format!("{key}.reinforced"), self.reinforced),
            (format!("{key}.double"), self.double),
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

impl Table for MinimumDistances {
    const ID: &'static str = "limits.minimum-distances";

    fn check(&self) -> Result<(), String> {
        non_negative(
            self.clearance_mm
                .all("clearance_mm")
                .into_iter()
                .chain(self.creepage_mm.all("creepage_mm")),
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

impl Table for CapacitorSubclasses {
    const ID: &'static str = "iec60384-14.subclasses";

    fn check(&self) -> Result<(), String> {
        non_negative(
            column(&self.subclasses, "subclasses", "max_rated_ac_v", |s| {
                s.max_rated_ac_v
            }),
            "max_rated_ac_v",
        )?;
        if self.series_count_for_reinforced < 2 {
            return Err(format!(
                "series_count_for_reinforced: {} is too few: it must be at least 2 (capacitors in series standing for one across reinforced insulation)",
                self.series_count_for_reinforced
            ));
        }
        for (i, s) in self.subclasses.iter().enumerate() {
            for (j, g) in s.bridges.iter().enumerate() {
                if crate::diag::word::<crate::project::Grade>(g).is_none() {
                    return Err(format!(
                        "{}: subclass {}: \"{g}\" is not an insulation grade",
                        item(&item("subclasses", i, "bridges"), j, ""),
                        s.subclass
                    ));
                }
            }
        }
        non_negative(
            column(&self.subclasses, "subclasses", "impulse_test_v", |s| {
                Some(s.impulse_test_v)
            }),
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

impl Table for TestVoltages {
    const ID: &'static str = "iec60950-1.test-voltages";

    fn check(&self) -> Result<(), String> {
        ascending(
            self.rows.iter().map(|r| r.up_to_peak_v),
            "rows",
            "up_to_peak_v",
        )?;
        non_negative(
            column(&self.rows, "rows", "basic_v_rms", |r| Some(r.basic_v_rms)).chain(column(
                &self.rows,
                "rows",
                "reinforced_v_rms",
                |r| Some(r.reinforced_v_rms),
            )),
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

impl Table for ThermalClasses {
    const ID: &'static str = "iec60085.thermal-classes";

    fn check(&self) -> Result<(), String> {
        ascending(self.classes.iter().map(|c| c.max_c), "classes", "max_c")
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

impl Table for SolidInsulation {
    const ID: &'static str = "iec60950-1.solid-insulation";

    fn check(&self) -> Result<(), String> {
        non_negative(
            std::iter::once((
                "min_distance_through_insulation_mm".to_string(),
                self.min_distance_through_insulation_mm,
            ))
            .chain(self.min_tape_layers.all("min_tape_layers")),
            "solid insulation figures",
        )
    }
}
