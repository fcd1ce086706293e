//! The project file as serde reads it: one raw struct per table, every key an `Option` of a
//! spanned lenient leaf (`crate::raw`), so that `validate` (in `read.rs`) can report every
//! problem with its line. Units are in the key names. These types mirror the file exactly;
//! the checked types in `mod.rs` are what the engine uses.

use schemars::JsonSchema;
use serde::Deserialize;

use super::{
    BetweenRows, BoardCoating, BoardConductor, CapacitorSubclass, CircuitKind, Field, Grade,
    InsulationSystem, MaterialGroup, OvervoltageCategory, PartKind, ProtectionClass,
    ThermalClassLetter,
};
use crate::input_limits::rule;
use crate::raw::{At, Flag, Num, Section, Sections, Text, Texts, Word};

/// A key holding a table (`[name]`).
pub type TableKey<T> = Option<At<Section<T>>>;
/// A key holding an array of tables (`[[name]]`).
pub type TablesKey<T> = Option<At<Sections<T>>>;
/// A key holding a leaf value.
pub type Key<L> = Option<At<L>>;

/// The whole project file.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawProject {
    /// What the design is (required).
    pub design: TableKey<RawDesign>,
    /// Where the equipment is used; defaults apply to what is absent.
    pub environment: TableKey<RawEnvironment>,
    /// The supply system (required).
    pub mains: TableKey<RawMains>,
    /// The circuits the barriers separate; at least one is required.
    pub circuit: TablesKey<RawCircuit>,
    /// The insulation barriers between two circuits.
    pub barrier: TablesKey<RawBarrier>,
    /// Parts that bridge a barrier.
    pub part: TablesKey<RawPart>,
    /// The power-entry stage (`[input]`, `[input.limiter]`, `[input.fuse]`).
    pub input: TableKey<crate::power_entry::RawInput>,
    /// The converter behind the bulk capacitor.
    pub converter: TableKey<crate::power_entry::RawConverter>,
    /// Conducted emissions on the mains port and the input filter.
    pub emc: TableKey<crate::emc::RawEmc>,
    /// The board's fabrication files, to measure clearance and creepage from.
    pub board: TableKey<RawBoard>,
}

/// `[board]`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawBoard {
    /// Gerber X2 files (copper layers, profile, drill and rout), relative to the project file
    /// (required).
    pub files: Key<Texts>,
    /// Board thickness in millimetres; default 1.6.
    pub thickness_mm: Key<Num<rule::ThicknessMm>>,
}

/// `[design]`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawDesign {
    /// The design's name (required).
    pub name: Key<Text>,
    /// Its revision, so that the report is tied to one.
    pub revision: Key<Text>,
    /// Protection class against electric shock: "I", "II" or "III" (required).
    pub protection_class: Key<Word<ProtectionClass>>,
    /// How the creepage table is read between two rows: "next-row" (default) or
    /// "interpolate" (linear, rounded up to 0.1 mm).
    pub creepage_between_rows: Key<Word<BetweenRows>>,
    /// How the altitude correction table is read between two rows: "next-row" (default) or
    /// "interpolate" (linear).
    pub altitude_between_rows: Key<Word<BetweenRows>>,
}

/// `[environment]`.
#[derive(Debug, Default, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawEnvironment {
    /// Pollution degree: 1, 2 or 3 (default 2).
    pub pollution_degree: Key<Num<rule::PollutionDegree>>,
    /// Overvoltage category of the mains: "I" to "IV" (default "II").
    pub overvoltage_category: Key<Word<OvervoltageCategory>>,
    /// Altitude of use in metres (default: up to 2000 m); clearances are corrected above
    /// 2000 m.
    pub altitude_m: Key<Num<rule::AltitudeM>>,
}

/// `[mains]`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawMains {
    /// Nominal line-to-neutral voltage of the supply system in volts (required).
    pub nominal_v: Key<Num<rule::VoltageV>>,
    /// Highest supply voltage in volts (default: nominal_v plus the rule book's tolerance).
    pub max_v: Key<Num<rule::VoltageV>>,
    /// Lowest supply voltage in volts (default: nominal_v minus the rule book's tolerance).
    pub min_v: Key<Num<rule::VoltageV>>,
    /// Mains frequency in hertz (default: the rule book's lowest and highest mains
    /// frequencies).
    pub frequency_hz: Key<Num<rule::MainsFrequencyHz>>,
}

/// One `[[circuit]]`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawCircuit {
    /// Unique id, referred to by barriers (required).
    pub id: Key<Text>,
    /// "mains", "hazardous" or "safe" (extra-low voltage) (required).
    pub kind: Key<Word<CircuitKind>>,
    /// Whether a person can touch it (or metal bonded to it) (default false).
    pub accessible: Key<Flag>,
    /// Whether it is bonded to protective earth (default false).
    pub earthed: Key<Flag>,
    /// Free text for the reader of the report.
    pub description: Key<Text>,
    /// Net names of this circuit as the board's files carry them (`.N`).
    pub nets: Key<Texts>,
}

/// One `[[barrier]]`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawBarrier {
    /// Unique id (required).
    pub id: Key<Text>,
    /// The two circuit ids it separates (required).
    pub between: Key<Texts>,
    /// Insulation grade (required).
    pub grade: Key<Word<Grade>>,
    /// Working voltage, rms, in volts (required).
    pub working_rms_v: Key<Num<rule::VoltageV>>,
    /// Steady-state or recurring peak working voltage in volts (default: the peak of a
    /// sinusoid of working_rms_v).
    pub working_peak_v: Key<Num<rule::VoltageV>>,
    /// Declared transient overvoltage in volts, instead of the rated impulse voltage from the
    /// mains (default: from the overvoltage category).
    pub transient_v: Key<Num<rule::TransientV>>,
    /// Frequency of the working voltage in hertz; above 30 kHz the figures do not hold (a
    /// warning).
    pub working_frequency_hz: Key<Num<rule::WorkingFrequencyHz>>,
    /// Material group of the insulation: "I", "II", "IIIa" or "IIIb"; or give `cti`, not
    /// both (default "IIIb").
    pub material_group: Key<Word<MaterialGroup>>,
    /// Comparative tracking index of the insulating material, instead of material_group.
    pub cti: Key<Num<rule::Cti>>,
    /// On a printed board: the printed-wiring creepage columns where allowed (default false).
    pub printed_board: Key<Flag>,
    /// Electric field: "inhomogeneous" (default, Case A) or "homogeneous".
    pub field: Key<Word<Field>>,
    /// Where a functional spacing on a board sits, the IPC-2221B column (default
    /// "outer-layer").
    pub board_conductor: Key<Word<BoardConductor>>,
    /// The board's coating, the IPC-2221B column (default "none").
    pub board_coating: Key<Word<BoardCoating>>,
    /// Clearance as laid out, in millimetres; absent = not yet known.
    pub clearance_mm: Key<Num<rule::DistanceMm>>,
    /// Creepage distance as laid out, in millimetres; absent = not yet known.
    pub creepage_mm: Key<Num<rule::DistanceMm>>,
    /// Width of a slot or groove in the creepage path, in millimetres; too narrow to count
    /// is a warning.
    pub slot_width_mm: Key<Num<rule::SlotMm>>,
    /// Refs of the declared parts (`[[part]]`) that bridge it.
    pub bridged_by: Key<Texts>,
    /// Free text for the reader of the report.
    pub description: Key<Text>,
}

/// One `[[part]]`: a part that bridges a barrier, with its ratings.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawPart {
    /// Unique reference designator (required).
    #[serde(rename = "ref")]
    pub reference: Key<Text>,
    /// What kind of part it is (required).
    pub kind: Key<Word<PartKind>>,
    /// Free text for the reader of the report.
    pub description: Key<Text>,
    /// Capacitors: safety subclass.
    pub subclass: Key<Word<CapacitorSubclass>>,
    /// Capacitors: capacitance in nanofarads.
    pub capacitance_nf: Key<Num<rule::CapacitanceNf>>,
    /// Capacitors: rated a.c. voltage in volts.
    pub rated_ac_v: Key<Num<rule::VoltageV>>,
    /// Capacitors: this many identical ones in series stand for the part (default 1).
    pub count_in_series: Key<Num<rule::CountInSeries>>,
    /// Optocouplers and digital isolators: rated isolation test voltage (60 s), rms, in volts.
    pub isolation_test_v_rms: Key<Num<rule::TestVRms>>,
    /// Optocouplers and digital isolators: external clearance of the package in millimetres.
    pub external_clearance_mm: Key<Num<rule::DistanceMm>>,
    /// Optocouplers and digital isolators: external creepage distance of the package in
    /// millimetres.
    pub external_creepage_mm: Key<Num<rule::DistanceMm>>,
    /// Optocouplers and digital isolators: distance through insulation in millimetres.
    pub distance_through_insulation_mm: Key<Num<rule::ThicknessMm>>,
    /// The part meets the thin-layer rules for solid insulation (default false).
    pub thin_layer_rated: Key<Flag>,
    /// Transformers: how the windings are kept apart.
    pub insulation_system: Key<Word<InsulationSystem>>,
    /// Transformers: layers of insulating tape.
    pub tape_layers: Key<Num<rule::TapeLayers>>,
    /// Transformers: margin width on each side in millimetres, for margin-tape.
    pub margin_mm: Key<Num<rule::DistanceMm>>,
    /// Transformers: thermal class letter (IEC 60085).
    pub thermal_class: Key<Word<ThermalClassLetter>>,
    /// Transformers: hot-spot temperature in degrees Celsius.
    pub hot_spot_c: Key<Num<rule::TemperatureC>>,
}
