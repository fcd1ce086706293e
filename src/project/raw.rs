//! The project file as serde reads it: one raw struct per table, every key an `Option` of a
//! spanned lenient leaf (`crate::raw`), so that `validate` (in `read.rs`) can report every
//! problem with its line. Units are in the key names. These types mirror the file exactly;
//! the checked types in `mod.rs` are what the engine uses. Here are the top level and the
//! project-wide tables; each area's tables are raw types beside that area's reader
//! (`insulation::RawBarrier`, `power_entry::RawInput`, `emc::RawEmc`, ...).

use schemars::JsonSchema;
use serde::Deserialize;

use super::{BetweenRows, OvervoltageCategory, ProtectionClass};
use crate::input_limits::rule;
use crate::raw::{At, Num, Section, Sections, Text, Word};

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
    pub circuit: TablesKey<crate::insulation::RawCircuit>,
    /// The insulation barriers between two circuits.
    pub barrier: TablesKey<crate::insulation::RawBarrier>,
    /// Parts that bridge a barrier.
    pub part: TablesKey<crate::insulation::RawPart>,
    /// The power-entry stage (`[input]`, `[input.limiter]`, `[input.fuse]`).
    pub input: TableKey<crate::power_entry::RawInput>,
    /// The converter behind the bulk capacitor.
    pub converter: TableKey<crate::power_entry::RawConverter>,
    /// Conducted emissions on the mains port and the input filter.
    pub emc: TableKey<crate::emc::RawEmc>,
    /// The board's fabrication files, to measure clearance and creepage from.
    pub board: TableKey<crate::insulation::RawBoard>,
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
    /// The end-product standard the lab applies (default: the IEC 60664-1 basics).
    pub standard: Key<Word<crate::standards::Standard>>,
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
