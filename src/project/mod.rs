//! The project file: the checked description of one design. `read` turns TOML text into a
//! [`Project`] or into every problem found, located by line and key.

mod raw;
mod read;

use std::collections::BTreeMap;

use serde::Serialize;

use crate::diag::Diagnostic;
use crate::raw::Span;

// Re-exported for the `spacing` command, which judges its flags by the same limits.
pub use crate::input_limits::{ALTITUDE_M, CTI, DISTANCE_MM, TRANSIENT_V, VOLTAGE_V};
pub use raw::*;
pub use read::read_project;

#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum ProtectionClass {
    #[value(name = "I")]
    I,
    #[value(name = "II")]
    II,
    #[value(name = "III")]
    III,
}

/// Overvoltage category of the supply the equipment is connected to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, clap::ValueEnum)]
pub enum OvervoltageCategory {
    #[value(name = "I")]
    I,
    #[value(name = "II")]
    II,
    #[value(name = "III")]
    III,
    #[value(name = "IV")]
    IV,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum CircuitKind {
    Mains,
    Hazardous,
    Safe,
}

/// Insulation grade of a barrier, weakest first.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, clap::ValueEnum)]
pub enum Grade {
    Functional,
    Basic,
    Supplementary,
    Reinforced,
    Double,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, clap::ValueEnum)]
pub enum MaterialGroup {
    #[value(name = "I")]
    I,
    #[value(name = "II")]
    II,
    #[value(name = "IIIa")]
    IIIa,
    #[value(name = "IIIb")]
    IIIb,
}

/// How the insulating material of a barrier is known.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Material {
    Group(MaterialGroup),
    Cti(f64),
    /// Not stated: the engine assumes the least favourable group and says so.
    Unstated,
}

/// Electric field between the conductors (IEC 60664-1 Case A or Case B).
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Field {
    Inhomogeneous,
    Homogeneous,
}

/// How a table is read between two of its rows (the creepage table, the altitude table).
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum BetweenRows {
    /// The next higher row (conservative; the default).
    NextRow,
    /// Linear interpolation (creepage rounded up to the next 0.1 mm).
    Interpolate,
}

/// Where a functional spacing on a printed board sits (selects the IPC-2221B column).
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum BoardConductor {
    OuterLayer,
    InnerLayer,
    ComponentLead,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum BoardCoating {
    None,
    Polymer,
    Conformal,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum PartKind {
    YCapacitor,
    XCapacitor,
    Optocoupler,
    DigitalIsolator,
    Transformer,
    Resistor,
    Relay,
    Other,
}

/// Safety subclass of a suppression capacitor (IEC 60384-14).
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum CapacitorSubclass {
    #[value(name = "X1")]
    X1,
    #[value(name = "X2")]
    X2,
    #[value(name = "Y1")]
    Y1,
    #[value(name = "Y2")]
    Y2,
    #[value(name = "Y4")]
    Y4,
}

/// How a transformer's windings are kept apart.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum InsulationSystem {
    TripleInsulatedWire,
    Tape,
    MarginTape,
}

/// Thermal class letter of an insulation system (IEC 60085).
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum ThermalClassLetter {
    #[value(name = "A")]
    A,
    #[value(name = "E")]
    E,
    #[value(name = "B")]
    B,
    #[value(name = "F")]
    F,
    #[value(name = "H")]
    H,
    #[value(name = "N")]
    N,
    #[value(name = "R")]
    R,
}

crate::domain_words!(
    ProtectionClass,
    OvervoltageCategory,
    CircuitKind,
    Grade,
    MaterialGroup,
    Field,
    BetweenRows,
    BoardConductor,
    BoardCoating,
    PartKind,
    CapacitorSubclass,
    InsulationSystem,
    ThermalClassLetter,
);

#[derive(Debug, Clone, PartialEq)]
pub struct Design {
    pub name: String,
    pub revision: Option<String>,
    pub protection_class: ProtectionClass,
    pub creepage_between_rows: BetweenRows,
    /// How the altitude correction factor is read between two rows of its table.
    pub altitude_between_rows: BetweenRows,
    /// `[design] standard`; `None`: the IEC 60664-1 basics, and the report says so.
    pub standard: Option<crate::standards::Standard>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Environment {
    pub pollution_degree: u8,
    pub overvoltage_category: OvervoltageCategory,
    pub altitude_m: f64,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Mains {
    pub nominal_v: f64,
    pub max_v: Option<f64>,
    pub min_v: Option<f64>,
    pub frequency_hz: Option<f64>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Circuit {
    pub id: String,
    pub kind: CircuitKind,
    pub accessible: bool,
    pub earthed: bool,
    /// An applied part (IEC 60601-1): under that standard it needs 2 MOPP from the mains.
    pub applied_part: bool,
    pub description: Option<String>,
    /// Net names of this circuit as the board's fabrication files carry them (`.N`).
    pub nets: Vec<crate::raw::Located<String>>,
    pub span: Span,
}

/// `[board]`: fabrication files to measure distances from.
#[derive(Debug, Clone, PartialEq)]
pub struct BoardSpec {
    /// As written, relative to the project file.
    pub files: Vec<crate::raw::Located<String>>,
    pub thickness_mm: f64,
    pub span: Span,
}

/// Settings that choose the IPC-2221B column for functional spacing on a board.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BoardSpacing {
    pub conductor: BoardConductor,
    pub coating: BoardCoating,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Barrier {
    pub id: String,
    pub between: [String; 2],
    pub grade: Grade,
    /// Under IEC 60601-1: the means of protection the grade names; `grade` is then the
    /// insulation it counts as (one means basic, two reinforced).
    pub means: Option<crate::standards::Means>,
    pub working_rms_v: f64,
    pub working_peak_v: Option<f64>,
    /// Declared transient overvoltage, overriding the rated impulse voltage from the mains.
    pub transient_v: Option<f64>,
    pub working_frequency_hz: Option<f64>,
    pub material: Material,
    pub printed_board: bool,
    pub field: Field,
    pub board: BoardSpacing,
    pub clearance_mm: Option<f64>,
    pub creepage_mm: Option<f64>,
    /// Width of a slot or groove in the creepage path, where the layout relies on one.
    pub slot_width_mm: Option<f64>,
    pub bridged_by: Vec<String>,
    pub description: Option<String>,
    /// Where the barrier and each of its keys were written, for later messages.
    pub span: Span,
    pub key_spans: BTreeMap<&'static str, Span>,
}

impl Barrier {
    /// Position of a key of this barrier, or of the barrier itself.
    pub fn span_of(&self, key: &str) -> Span {
        self.key_spans
            .get(key)
            .cloned()
            .unwrap_or_else(|| self.span.clone())
    }

    /// The working peak voltage: as declared, or else the peak of a sinusoid of the working
    /// rms voltage (rounded to a microvolt, so that every table read at it, the clearance,
    /// the board spacing and the test voltage, sees the same number).
    pub fn peak_v(&self) -> f64 {
        self.working_peak_v
            .unwrap_or_else(|| crate::spacing::tidy(self.working_rms_v * std::f64::consts::SQRT_2))
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct Part {
    pub reference: String,
    pub kind: PartKind,
    pub description: Option<String>,
    pub ratings: PartRatings,
    pub span: Span,
}

/// The declared ratings of a part; which apply depends on its kind.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct PartRatings {
    /// Capacitors: X1, X2, Y1, Y2 or Y4.
    pub subclass: Option<String>,
    pub capacitance_nf: Option<f64>,
    pub rated_ac_v: Option<f64>,
    /// Capacitors: this many identical capacitors in series stand for the part.
    pub count_in_series: u32,
    /// Optocouplers and digital isolators: rated isolation test voltage (60 s).
    pub isolation_test_v_rms: Option<f64>,
    pub external_clearance_mm: Option<f64>,
    pub external_creepage_mm: Option<f64>,
    pub distance_through_insulation_mm: Option<f64>,
    /// The part meets the thin-layer rules for solid insulation.
    pub thin_layer_rated: bool,
    /// Transformers: "triple-insulated-wire", "tape" or "margin-tape".
    pub insulation_system: Option<String>,
    pub tape_layers: Option<u32>,
    pub margin_mm: Option<f64>,
    /// IEC 60085 letter.
    pub thermal_class: Option<String>,
    pub hot_spot_c: Option<f64>,
}

/// A checked project: everything the calculations need, with the defaults applied.
#[derive(Debug, Clone, PartialEq)]
pub struct Project {
    pub design: Design,
    pub environment: Environment,
    pub mains: Mains,
    pub circuits: Vec<Circuit>,
    pub barriers: Vec<Barrier>,
    pub parts: Vec<Part>,
    /// Every default the reader applied, in words for the report.
    pub assumptions: Vec<String>,
    /// Values that were accepted but look implausible.
    pub warnings: Vec<Diagnostic>,
    /// `[input]` with its limiter and fuse; `None` when absent.
    pub input: Option<crate::power_entry::InputSpec>,
    /// `[converter]`; `None` when absent.
    pub converter: Option<crate::power_entry::ConverterSpec>,
    /// `[emc]`; `None` when absent.
    pub emc: Option<crate::emc::EmcSpec>,
    /// `[board]`; `None` when absent (distances are then only as declared).
    pub board: Option<BoardSpec>,
    /// Tables present in the file that this version reads but does not evaluate.
    pub not_evaluated: Vec<String>,
    /// Where the project-wide keys were written (`mains.nominal_v`, ...), for later messages.
    pub key_spans: BTreeMap<String, Span>,
}
