//! The project file as serde reads it: one raw struct per table, every key an `Option` of a
//! spanned lenient leaf (`crate::raw`), so that `validate` (in `read.rs`) can report every
//! problem with its line. Units are in the key names. These types mirror the file exactly;
//! the checked types in `mod.rs` are what the engine uses.

use serde::Deserialize;
use toml::Spanned;

use super::{
    BetweenRows, BoardCoating, BoardConductor, CapacitorSubclass, CircuitKind, Field,
    InsulationSystem, MaterialGroup, OvervoltageCategory, PartKind, ProtectionClass,
    ThermalClassLetter,
};
use crate::raw::{Flag, Num, Section, Sections, Text, Texts, Word};

/// A key holding a table (`[name]`).
pub type TableKey<T> = Option<Spanned<Section<T>>>;
/// A key holding an array of tables (`[[name]]`).
pub type TablesKey<T> = Option<Spanned<Sections<T>>>;
/// A key holding a leaf value.
pub type Key<L> = Option<Spanned<L>>;

/// The whole project file.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawProject {
    /// What the design is (required).
    pub design: TableKey<RawDesign>,
    /// Where the equipment is used; defaults apply to what is absent.
    pub environment: TableKey<RawEnvironment>,
    /// The supply system (required).
    pub mains: TableKey<RawMains>,
    /// The circuits the barriers separate (at least one).
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
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawBoard {
    /// Gerber X2 files (copper layers, profile, drill and rout), relative to the project file
    /// (required).
    pub files: Key<Texts>,
    /// Board thickness in millimetres; default 1.6.
    pub thickness_mm: Key<Num>,
}

/// `[design]`.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawDesign {
    /// The design's name (required).
    pub name: Key<Text>,
    /// Its revision, so that the report is tied to one.
    pub revision: Key<Text>,
    /// "I", "II" or "III" (required).
    pub protection_class: Key<Word<ProtectionClass>>,
    /// How the creepage table is read between two rows (default: the next higher row).
    pub creepage_between_rows: Key<Word<BetweenRows>>,
    /// How the altitude table is read between two rows (default: the next higher row).
    pub altitude_between_rows: Key<Word<BetweenRows>>,
    /// The end-product standard the lab applies (default: the IEC 60664-1 basics).
    pub standard: Key<Word<crate::standards::Standard>>,
}

/// `[environment]`.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawEnvironment {
    /// 1, 2 or 3 (default 2).
    pub pollution_degree: Key<Num>,
    /// "I" to "IV" (default "II").
    pub overvoltage_category: Key<Word<OvervoltageCategory>>,
    /// Altitude of use in metres (default: up to 2000 m).
    pub altitude_m: Key<Num>,
}

/// `[mains]`.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawMains {
    /// Nominal line-to-neutral voltage of the supply system in volts (required).
    pub nominal_v: Key<Num>,
    /// Highest supply voltage in volts.
    pub max_v: Key<Num>,
    /// Lowest supply voltage in volts.
    pub min_v: Key<Num>,
    /// Mains frequency in hertz.
    pub frequency_hz: Key<Num>,
}

/// One `[[circuit]]`.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawCircuit {
    /// Unique id, referred to by barriers (required).
    pub id: Key<Text>,
    /// "mains", "hazardous" or "safe" (required).
    pub kind: Key<Word<CircuitKind>>,
    /// Whether a person can touch it (or metal bonded to it).
    pub accessible: Key<Flag>,
    /// Whether it is bonded to protective earth.
    pub earthed: Key<Flag>,
    pub description: Key<Text>,
    /// Net names of this circuit as the board's files carry them (`.N`).
    pub nets: Key<Texts>,
}

/// One `[[barrier]]`.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawBarrier {
    /// Unique id (required).
    pub id: Key<Text>,
    /// The two circuit ids it separates (required).
    pub between: Key<Texts>,
    /// Insulation grade, or under IEC 60601-1 a means of protection (required).
    pub grade: Key<Word<crate::standards::GradeWord>>,
    /// Working voltage, rms, in volts (required).
    pub working_rms_v: Key<Num>,
    /// Steady-state or recurring peak working voltage in volts.
    pub working_peak_v: Key<Num>,
    /// Declared transient overvoltage in volts, instead of the rated impulse voltage.
    pub transient_v: Key<Num>,
    /// Frequency of the working voltage in hertz.
    pub working_frequency_hz: Key<Num>,
    /// "I", "II", "IIIa" or "IIIb"; or give `cti`.
    pub material_group: Key<Word<MaterialGroup>>,
    /// Comparative tracking index of the insulating material.
    pub cti: Key<Num>,
    /// On a printed board (the printed-wiring creepage columns where allowed).
    pub printed_board: Key<Flag>,
    /// "inhomogeneous" (default) or "homogeneous".
    pub field: Key<Word<Field>>,
    /// Where a functional spacing on a board sits (IPC-2221B column).
    pub board_conductor: Key<Word<BoardConductor>>,
    /// The board's coating (IPC-2221B column).
    pub board_coating: Key<Word<BoardCoating>>,
    /// Clearance as laid out, in millimetres; absent = not yet known.
    pub clearance_mm: Key<Num>,
    /// Creepage distance as laid out, in millimetres; absent = not yet known.
    pub creepage_mm: Key<Num>,
    /// Width of a slot or groove in the creepage path, in millimetres.
    pub slot_width_mm: Key<Num>,
    /// Refs of the parts that bridge it.
    pub bridged_by: Key<Texts>,
    pub description: Key<Text>,
}

/// One `[[part]]`: a part that bridges a barrier, with its ratings.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawPart {
    /// Unique reference designator (required).
    #[serde(rename = "ref")]
    pub reference: Key<Text>,
    /// What kind of part it is (required).
    pub kind: Key<Word<PartKind>>,
    pub description: Key<Text>,
    /// Capacitors: safety subclass.
    pub subclass: Key<Word<CapacitorSubclass>>,
    /// Capacitors: capacitance in nanofarads.
    pub capacitance_nf: Key<Num>,
    /// Rated a.c. voltage in volts.
    pub rated_ac_v: Key<Num>,
    /// Capacitors: this many identical ones in series stand for the part (default 1).
    pub count_in_series: Key<Num>,
    /// Optocouplers and digital isolators: rated isolation test voltage (60 s), rms, in volts.
    pub isolation_test_v_rms: Key<Num>,
    /// External clearance of the package in millimetres.
    pub external_clearance_mm: Key<Num>,
    /// External creepage distance of the package in millimetres.
    pub external_creepage_mm: Key<Num>,
    /// Distance through insulation in millimetres.
    pub distance_through_insulation_mm: Key<Num>,
    /// The part meets the thin-layer rules for solid insulation.
    pub thin_layer_rated: Key<Flag>,
    /// Transformers: how the windings are kept apart.
    pub insulation_system: Key<Word<InsulationSystem>>,
    /// Transformers: layers of insulating tape.
    pub tape_layers: Key<Num>,
    /// Transformers: margin width in millimetres.
    pub margin_mm: Key<Num>,
    /// Transformers: thermal class letter (IEC 60085).
    pub thermal_class: Key<Word<ThermalClassLetter>>,
    /// Transformers: hot-spot temperature in degrees Celsius.
    pub hot_spot_c: Key<Num>,
}
