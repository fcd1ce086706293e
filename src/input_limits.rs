//! Every limit on a number read from a project file: the hard limits (an error outside)
//! and the plausible range (a warning, an `input.suspicious_value` finding, outside). Each
//! quantity is defined once here and named after what it is, so two readers of the same
//! quantity cannot drift apart; a key takes the rule of its quantity.

/// What a number may be: its hard limits (an error outside) and its plausible range
/// (a warning outside), with the words used in messages.
#[derive(Debug, Clone, Copy)]
pub struct NumberRule {
    /// Lowest allowed value and whether it is itself allowed.
    pub min: f64,
    pub min_inclusive: bool,
    /// Highest allowed value (inclusive).
    pub max: f64,
    /// Below this (and above zero) the value is accepted with a warning that it looks
    /// implausible: a value in farads where nanofarads were meant, say.
    pub plausible_min: f64,
    /// Above this the value is accepted with a warning that it looks implausible.
    pub plausible_max: f64,
    pub integer: bool,
    /// The expected form, as a reader would say it ("a voltage in volts, 0 to 100000").
    pub expected: &'static str,
}

impl NumberRule {
    /// Checks a number; `Err` holds the reason, `Ok(Some)` a warning. Numbers in the
    /// messages are printed exactly (scientific notation at the extremes: 1e300, 5e-324),
    /// never rounded and never as hundreds of digits.
    pub fn judge(&self, value: f64) -> Result<Option<String>, String> {
        use crate::text::exact_number as n;
        if !value.is_finite() {
            return Err(format!(
                "{value} is not a finite number; expected {}",
                self.expected
            ));
        }
        if self.integer && value.fract() != 0.0 {
            return Err(format!(
                "{} is not a whole number; expected {}",
                n(value),
                self.expected
            ));
        }
        let below = if self.min_inclusive {
            value < self.min
        } else {
            value <= self.min
        };
        if below || value > self.max {
            return Err(format!(
                "{} is out of range; expected {}",
                n(value),
                self.expected
            ));
        }
        if value > 0.0 && value < self.plausible_min {
            return Ok(Some(format!(
                "{} is unusually small (below {}); check the unit",
                n(value),
                n(self.plausible_min)
            )));
        }
        if value > 0.0 && value < self.absurdly_small_below() {
            return Ok(Some(format!(
                "{} is absurdly small (below {}, a billionth of the usual largest value); check the unit",
                n(value),
                n(self.absurdly_small_below())
            )));
        }
        if value > self.plausible_max {
            return Ok(Some(format!(
                "{} is unusually large (above {}); check the unit",
                n(value),
                n(self.plausible_max)
            )));
        }
        Ok(None)
    }

    /// A positive value below this is implausible even where the rule sets no
    /// `plausible_min`: nine orders of magnitude below the top of the plausible range, and
    /// every subnormal number (5e-324 Hz prints as 0 and means nothing). Only for
    /// quantities whose zero is a true zero (`min` at or above 0); a level in dBuV or a
    /// temperature in degrees Celsius may sit just above 0 by right.
    pub fn absurdly_small_below(&self) -> f64 {
        if self.min < 0.0 || !self.plausible_max.is_finite() || self.plausible_max >= f64::MAX {
            return 0.0;
        }
        // Divided rather than multiplied by 1e-9: 1000 / 1e9 is exactly the double 1e-6.
        (self.plausible_max / 1e9).max(f64::MIN_POSITIVE)
    }
}

/// A quantity above zero with no plausible minimum.
const fn above_zero(max: f64, plausible_max: f64, expected: &'static str) -> NumberRule {
    NumberRule {
        min: 0.0,
        min_inclusive: false,
        max,
        plausible_min: 0.0,
        plausible_max,
        integer: false,
        expected,
    }
}

// Voltages

/// A voltage in volts (working, nominal, peak): above zero, at most 100 kV.
pub const VOLTAGE_V: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 100_000.0,
    plausible_min: 0.0,
    plausible_max: 1_000.0,
    integer: false,
    expected: "a voltage in volts, above 0 and at most 100000",
};

pub const TRANSIENT_V: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1_000_000.0,
    plausible_min: 0.0,
    plausible_max: 12_000.0,
    integer: false,
    expected: "an impulse voltage in volts, above 0",
};

pub const TEST_V_RMS: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1_000_000.0,
    plausible_min: 0.0,
    plausible_max: 20_000.0,
    integer: false,
    expected: "a test voltage in V rms, above 0",
};

/// The same limits as any voltage, in the words of a component rating.
pub const RATED_V: NumberRule = NumberRule {
    expected: "a rated voltage in volts, above 0",
    ..VOLTAGE_V
};

pub const MIN_BULK_V: NumberRule = NumberRule {
    expected: "the lowest bulk voltage in volts at which the converter regulates, above 0",
    ..VOLTAGE_V
};

pub const DROP_V: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: true,
    max: 100.0,
    plausible_min: 0.0,
    plausible_max: 5.0,
    integer: false,
    expected: "the total forward drop of two bridge diodes in volts, 0 or more",
};

pub const SWING_V: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 100_000.0,
    plausible_min: 0.0,
    plausible_max: 2_000.0,
    integer: false,
    expected: "a voltage swing in volts, above 0 and at most 100000",
};

// Distances, heights, temperatures and materials

/// A distance as laid out, in millimetres. Zero is a real (failing) distance.
pub const DISTANCE_MM: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: true,
    max: 1_000_000.0,
    plausible_min: 0.0,
    plausible_max: 100.0,
    integer: false,
    expected: "a distance in millimetres, 0 or more",
};

pub const SLOT_MM: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1_000_000.0,
    plausible_min: 0.0,
    plausible_max: 20.0,
    integer: false,
    expected: "a slot width in millimetres, above 0",
};

pub const THICKNESS_MM: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1000.0,
    plausible_min: 0.0,
    plausible_max: 10.0,
    integer: false,
    expected: "a thickness in millimetres, above 0",
};

pub const ALTITUDE_M: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: true,
    max: 100_000.0,
    plausible_min: 0.0,
    plausible_max: 10_000.0,
    integer: false,
    expected: "an altitude in metres above sea level, 0 or more",
};

pub const TEMPERATURE_C: NumberRule = NumberRule {
    min: -273.15,
    min_inclusive: false,
    max: 10_000.0,
    plausible_min: 0.0,
    plausible_max: 250.0,
    integer: false,
    expected: "a temperature in degrees Celsius",
};

pub const POLLUTION_DEGREE: NumberRule = NumberRule {
    min: 1.0,
    min_inclusive: true,
    max: 3.0,
    plausible_min: 0.0,
    plausible_max: 3.0,
    integer: true,
    expected: "1, 2 or 3 (pollution degree 4 is not covered)",
};

pub const CTI: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: true,
    max: 10_000.0,
    plausible_min: 0.0,
    plausible_max: 600.0,
    integer: false,
    expected: "a comparative tracking index in volts, 0 or more",
};

pub const COUNT_IN_SERIES: NumberRule = NumberRule {
    min: 1.0,
    min_inclusive: true,
    max: 100.0,
    plausible_min: 0.0,
    plausible_max: 4.0,
    integer: true,
    expected: "a whole number of capacitors in series, 1 or more",
};

pub const TAPE_LAYERS: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: true,
    max: 1000.0,
    plausible_min: 0.0,
    plausible_max: 20.0,
    integer: true,
    expected: "a whole number of tape layers, 0 or more",
};

// Frequencies and times

pub const MAINS_FREQUENCY_HZ: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1e6,
    plausible_min: 0.0,
    plausible_max: 400.0,
    integer: false,
    expected: "a mains frequency in hertz, above 0 (50, 60 or 400)",
};

/// A barrier's working frequency: 0 is dc.
pub const WORKING_FREQUENCY_HZ: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: true,
    max: 1e12,
    plausible_min: 0.0,
    plausible_max: 100e6,
    integer: false,
    expected: "a frequency in hertz, 0 (dc) or more",
};

/// A pre-scan point: above 0; the limit lines' band is checked later, against the table.
pub const PRESCAN_FREQUENCY_HZ: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1e12,
    plausible_min: 0.0,
    plausible_max: 30e6,
    integer: false,
    expected: "a frequency in hertz, above 0 (the limits cover 150000 to 30000000)",
};

/// The lowest switching frequency the noise estimate can use. Below 1 kHz a figure is no
/// switching converter's (most likely a value in kilohertz or megahertz written into a
/// hertz key), and it would put tens of thousands of harmonics into the conducted band.
pub const MIN_SWITCHING_HZ: f64 = 1_000.0;

pub const SWITCHING_HZ: NumberRule = NumberRule {
    min: MIN_SWITCHING_HZ,
    min_inclusive: true,
    ..above_zero(
        1e10,
        1e7,
        "a switching frequency in hertz, at least 1000 (65000 for 65 kHz)",
    )
};

pub const MAX_DUTY: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1.0,
    plausible_min: 0.0,
    plausible_max: 1.0,
    integer: false,
    expected: "a duty cycle as a fraction, above 0 and below 1 (0.45 for 45 %)",
};

pub const RISE_NS: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1e6,
    plausible_min: 0.1,
    plausible_max: 10_000.0,
    integer: false,
    expected: "a rise time in nanoseconds, above 0 (20 for 20 ns)",
};

// Capacitances, inductances, resistances

/// A capacitor across insulation (a part bridging a barrier, the filter's Y capacitance).
/// Y capacitors are picofarads to tens of nanofarads and the touch current keeps their sum
/// there, so above 1 uF (1000 nF) a value was most likely written in picofarads. The hard
/// limit, 1 F, is already absurd for such a part; the project reader used to allow 1000 F
/// and warn only above 100 uF, which no capacitor across insulation comes near.
pub const CAPACITANCE_NF: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1e9,
    plausible_min: 0.001,
    plausible_max: 1_000.0,
    integer: false,
    expected: "a capacitance in nanofarads, above 0",
};

pub const BULK_UF: NumberRule = NumberRule {
    // Below 0.1 uF a bulk capacitor was most likely written in farads.
    plausible_min: 0.1,
    ..above_zero(
        1e6,
        10_000.0,
        "a capacitance in microfarads, above 0 (47 for 47 uF)",
    )
};

pub const X_UF: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: true,
    max: 10_000.0,
    plausible_min: 0.0001,
    plausible_max: 10.0,
    integer: false,
    expected: "a capacitance in microfarads, 0 or more (0.47 for 470 nF)",
};

/// Below 1 pF no filter capacitor is meant; the corner, R0 and the damping ratio divide
/// by it.
pub const CAPACITANCE_UF: NumberRule = NumberRule {
    min: 1e-6,
    min_inclusive: true,
    max: 1e6,
    plausible_min: 0.0001,
    plausible_max: 100.0,
    integer: false,
    expected: "a capacitance in microfarads, above 0 (at least 0.000001, 1 pF)",
};

pub const CAPACITANCE_PF: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1e9,
    plausible_min: 0.0,
    plausible_max: 10_000.0,
    integer: false,
    expected: "a capacitance in picofarads, above 0",
};

pub const INDUCTANCE_UH: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1e9,
    plausible_min: 0.0,
    plausible_max: 100_000.0,
    integer: false,
    expected: "an inductance in microhenries, above 0",
};

pub const INDUCTANCE_MH: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1e6,
    plausible_min: 0.0,
    plausible_max: 200.0,
    integer: false,
    expected: "an inductance in millihenries, above 0",
};

/// A resistance in a power or filter path: an inrush limiter (cold or hot), a choke's
/// winding, a damping resistor. Beyond 1 Mohm none of them is meant (the limiter would
/// pass no load current, the damping branch would damp nothing); the EMC reader used to
/// allow up to 1 Gohm, the power-entry one 1 Mohm.
pub const RESISTANCE_OHM: NumberRule = above_zero(1e6, 10_000.0, "a resistance in ohms, above 0");

pub const SERIES_OHM: NumberRule = NumberRule {
    min: 1e-6,
    min_inclusive: true,
    max: 1e6,
    plausible_min: 0.0,
    plausible_max: 100.0,
    integer: false,
    expected: "a resistance in ohms, at least 0.000001 (every charging path has some: line, bridge, ESR)",
};

pub const BLEEDER_OHM: NumberRule = above_zero(1e13, 1e9, "a resistance in ohms, above 0");

// Currents, energies, power

pub const CURRENT_A: NumberRule = above_zero(1e6, 10_000.0, "a current in amperes, above 0");

pub const FUSE_A: NumberRule = above_zero(1e4, 100.0, "a rated current in amperes, above 0");

pub const BREAKING_A: NumberRule = above_zero(1e7, 1e5, "a breaking capacity in amperes, above 0");

pub const I2T_A2S: NumberRule = above_zero(1e9, 1e5, "a melting I2t in A2s, above 0");

pub const ENERGY_J: NumberRule = above_zero(1e6, 1_000.0, "an energy in joules, above 0");

/// Below a milliwatt no mains converter's output is meant (the hold-up time and the
/// operating point divide by it).
pub const OUTPUT_W: NumberRule = NumberRule {
    min: 0.001,
    min_inclusive: true,
    ..above_zero(1e7, 10_000.0, "an output power in watts, at least 0.001")
};

/// Below 1 % no converter's efficiency is meant (the input power divides by it).
pub const EFFICIENCY: NumberRule = NumberRule {
    min: 0.01,
    min_inclusive: true,
    max: 1.0,
    plausible_min: 0.0,
    plausible_max: 1.0,
    integer: false,
    expected: "an efficiency as a fraction, at least 0.01 and at most 1 (0.86 for 86 %)",
};

// Levels and margins

pub const MARGIN_DB: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: true,
    max: 60.0,
    plausible_min: 0.0,
    plausible_max: 20.0,
    integer: false,
    expected: "a margin in dB below the limit, 0 to 60",
};

pub const LEVEL_DBUV: NumberRule = NumberRule {
    min: -100.0,
    min_inclusive: true,
    max: 250.0,
    plausible_min: 0.0,
    plausible_max: 150.0,
    integer: false,
    expected: "a level in dBuV, -100 to 250",
};

/// Marker types that put a number's rule into its raw field's type
/// (`pollution_degree: Key<Num<rule::PollutionDegree>>`): the reader judges the value by it
/// (`Reader::ruled`) and the JSON Schema (`gapwarden schema`) states its limits, so the two
/// cannot drift apart. A new number key names its rule here in one line.
pub mod rule {
    use super::*;
    use crate::raw::{NumberKind, Ruled};

    macro_rules! rule_types {
        ($($name:ident => $rule:ident,)*) => {$(
            #[doc = concat!("`", stringify!($rule), "`.")]
            #[derive(Debug, Clone, Copy, PartialEq)]
            pub struct $name;

            impl NumberKind for $name {
                const RULE: Option<NumberRule> = Some($rule);
            }

            impl Ruled for $name {
                const THE_RULE: NumberRule = $rule;
            }
        )*};
    }

    rule_types! {
    AltitudeM => ALTITUDE_M,
    BleederOhm => BLEEDER_OHM,
    BreakingA => BREAKING_A,
    BulkUf => BULK_UF,
    CapacitanceNf => CAPACITANCE_NF,
    CapacitancePf => CAPACITANCE_PF,
    CapacitanceUf => CAPACITANCE_UF,
    CountInSeries => COUNT_IN_SERIES,
    Cti => CTI,
    CurrentA => CURRENT_A,
    DistanceMm => DISTANCE_MM,
    DropV => DROP_V,
    Efficiency => EFFICIENCY,
    EnergyJ => ENERGY_J,
    FuseA => FUSE_A,
    I2tA2s => I2T_A2S,
    InductanceMh => INDUCTANCE_MH,
    InductanceUh => INDUCTANCE_UH,
    LevelDbuv => LEVEL_DBUV,
    MainsFrequencyHz => MAINS_FREQUENCY_HZ,
    MarginDb => MARGIN_DB,
    MaxDuty => MAX_DUTY,
    MinBulkV => MIN_BULK_V,
    OutputW => OUTPUT_W,
    PollutionDegree => POLLUTION_DEGREE,
    PrescanFrequencyHz => PRESCAN_FREQUENCY_HZ,
    RatedV => RATED_V,
    ResistanceOhm => RESISTANCE_OHM,
    RiseNs => RISE_NS,
    SeriesOhm => SERIES_OHM,
    SlotMm => SLOT_MM,
    SwingV => SWING_V,
    SwitchingHz => SWITCHING_HZ,
    TapeLayers => TAPE_LAYERS,
    TemperatureC => TEMPERATURE_C,
    TestVRms => TEST_V_RMS,
    ThicknessMm => THICKNESS_MM,
    TransientV => TRANSIENT_V,
    VoltageV => VOLTAGE_V,
    WorkingFrequencyHz => WORKING_FREQUENCY_HZ,
    XUf => X_UF,
    }
}
