//! One fixture pair per shipped check id: a small change to a base project that raises the
//! check, and one beside it that does not. The table below is the whole test; a check added
//! to rules/checks/ without an entry here fails `every_shipped_check_has_a_fixture_pair`
//! with its id named.
//!
//! How a case runs: the base project (an example or a test fixture, never changed on disk)
//! is read as TOML, the case's `common` edits and then its `raise` or `clear` edits are
//! applied (a `[board]`'s files are named from the base's folder), and each variant is
//! written to a temporary file and checked by the real binary (`check FILE --format json`,
//! with `--rules DIR` when a case writes house rule files). The assertions are on the JSON
//! findings' ids:
//!
//! * the raise variant has a finding with the id, the clear variant has none;
//! * the raise variant raises exactly that id and the case's `also` ids that the clear
//!   variant does not (`also` names what the same change raises by its nature, such as
//!   `power_entry.not_evaluated` when the `[input]` table goes), so a fixture cannot pass
//!   by raising something else as well.
//!
//! The two variants usually differ in one value on either side of the figure the check
//! compares. Where that figure is a published value, the comment beside the case names it;
//! where it is the tool's own simulation, the comment says so and the values keep a margin.
//! The expected outcome is never read from rules/ or from the tool.

use crate::common;
use common::*;

use std::collections::BTreeSet;
use std::path::{Path, PathBuf};

use serde_json::Value;

// ---------------------------------------------------------------------------------------
// The table
// ---------------------------------------------------------------------------------------

/// A change to the base project.
#[derive(Clone, Copy, Debug)]
enum Edit {
    /// Sets a key to a TOML value. The path is dotted; `name[sel]` picks an entry of an
    /// array of tables by index or by its `id` or `ref` (`barrier[pri-sec].clearance_mm`).
    /// Missing tables on the way are created.
    Set(&'static str, &'static str),
    /// Removes a key or a whole table (the key must exist).
    Remove(&'static str),
    /// Merges a TOML snippet: tables key by key, arrays of tables appended.
    Add(&'static str),
    /// Writes a file into a house rules folder, passed to the binary with `--rules`.
    House(&'static str, &'static str),
}
use Edit::*;

/// One check id's fixture pair.
struct Case {
    id: &'static str,
    /// Project file relative to the crate root.
    base: &'static str,
    /// Edits shared by both variants.
    common: &'static [Edit],
    /// Edits that raise the check.
    raise: &'static [Edit],
    /// Edits under which it is not raised (often empty: the base does not raise it).
    clear: &'static [Edit],
    /// Ids the raising change raises as well, by its nature.
    also: &'static [&'static str],
}

const CLASS2: &str = "examples/class2-adapter.toml";
const CLASS1: &str = "examples/class1-appliance.toml";
const REINFORCED_8MM: &str = "tests/fixtures/iso-class2-reinforced.toml";
const MEDICAL: &str = "examples/medical-supply.toml";

/// The examples name an end-product standard (`[design] standard`); the cases whose values
/// come from IEC 60664-1 or IEC 60950-1 Table 5B dimension by the IEC 60664-1 basics.
const IEC60664: Edit = Set("design.standard", "\"iec60664-1\"");

/// Check ids no change to the shipped inputs raises, with the reason. Each still has a
/// "not raised" fixture in `checks_that_cannot_be_raised_are_not_raised_on_their_fixtures`.
const CANNOT_BE_RAISED: &[(&str, &str)] = &[(
    "power_entry.simulation_not_converged",
    "the rectifier's steady-state search (src/power_entry/rectifier.rs) converged for every \
     input tried: a grid of bulk capacitance 1-4700 uF, series resistance 0.01-50 ohm, load \
     0.1-200 W, 50 and 400 Hz; 250 random designs over wider ranges; and loads within 1e-9 W \
     of the point where the bulk voltage collapses. Its bound (80 half-cycles, 512,000 steps \
     per half-cycle) is a constant in the code, not an input, so a project or house rule \
     cannot reach it. The check guards a failure the code can report but no input produced.",
)];

/// A house x-discharge table with a residual-voltage limit (none is shipped). The limits
/// are those of IEC 60950-1:2005 clause 2.1.1.7 (0.1 uF; 1 s pluggable type A, 10 s type B;
/// confirmed through a quotation, rules/SOURCES.md "Power entry"); the residual time is the 2 s
/// of IEC 62368-1 ed. 3 (from memory). The 60 V limit is an invented house policy (it is
/// the ES1 d.c. boundary of IEC 62368-1, one source, rules/SOURCES.md "Power entry").
const HOUSE_X_RESIDUAL: &str = r#"
id = "power-entry.x-discharge"
overrides = true
title = "X-capacitor discharge (test house policy: at most 60 V after 2 s)"
source = "IEC 60950-1:2005, clause 2.1.1.7; invented house limit on the residual voltage"
provenance = "House rule for the tests."

[threshold_uf]
value = 0.1
source = "IEC 60950-1:2005, clause 2.1.1.7 (confirmed through a quotation)"

[[limits]]
connection = "plug"
max_time_constant_s = 1.0
source = "IEC 60950-1:2005, clause 2.1.1.7: pluggable equipment type A"

[[limits]]
connection = "industrial-plug"
max_time_constant_s = 10.0
source = "IEC 60950-1:2005, clause 2.1.1.7: pluggable equipment type B"

[residual_after_s]
value = 2.0
source = "IEC 62368-1 ed. 3 (from memory)"

[residual_limit_v]
value = 60.0
source = "invented house policy for the tests"

[[not_applicable]]
connection = "permanent"
reason = "permanently connected equipment is disconnected by the installation's isolating device"
source = "IEC 60950-1:2005, clause 2.1.1.7"
"#;

/// A house floor: every reinforced barrier needs 10 mm creepage (invented team policy).
const HOUSE_MIN_CREEPAGE: &str = r#"
id = "limits.minimum-distances"
overrides = true
title = "House minimum distances (test team policy)"
source = "invented house policy for the tests: reinforced creepage at least 10 mm"
provenance = "House rule, no published source."
clearance_mm = { functional = 0, basic = 0, supplementary = 0, reinforced = 0, double = 0 }
creepage_mm = { functional = 0, basic = 0, supplementary = 0, reinforced = 10, double = 0 }
"#;

const BOARD: &str = "examples/class2-adapter-board.toml";

/// The board example's files by absolute path: the variants are written to a scratch
/// folder, and `[board] files` are read relative to the project file.
const BOARD_FILES: Edit = Set(
    "board.files",
    concat!(
        "[\"",
        env!("CARGO_MANIFEST_DIR"),
        "/examples/board/top.gbr\", \"",
        env!("CARGO_MANIFEST_DIR"),
        "/examples/board/bottom.gbr\", \"",
        env!("CARGO_MANIFEST_DIR"),
        "/examples/board/outline.gbr\", \"",
        env!("CARGO_MANIFEST_DIR"),
        "/examples/board/pth.gbr\", \"",
        env!("CARGO_MANIFEST_DIR"),
        "/examples/board/npth.gbr\"]"
    ),
);

/// House floors for the board cases (invented house policy, no published source). The
/// board example's measured distances are worked out from its geometry in
/// tests/it/board.rs: pri-sec clearance sqrt(8^2 + 1^2) - 2 - 0.004 = 6.058 mm, creepage
/// 8.2 - 0.004 = 8.196 mm; input-bulk 2.7 - 0.004 = 2.696 mm.
const HOUSE_CLEARANCE_7: &str = r#"
id = "limits.minimum-distances"
overrides = true
title = "House minimum distances (test team policy)"
source = "invented house policy for the tests: reinforced clearance at least 7 mm"
provenance = "House rule, no published source."
clearance_mm = { functional = 0, basic = 0, supplementary = 0, reinforced = 7, double = 0 }
creepage_mm = { functional = 0, basic = 0, supplementary = 0, reinforced = 0, double = 0 }
"#;
const HOUSE_CLEARANCE_6: &str = r#"
id = "limits.minimum-distances"
overrides = true
title = "House minimum distances (test team policy)"
source = "invented house policy for the tests: reinforced clearance at least 6 mm"
provenance = "House rule, no published source."
clearance_mm = { functional = 0, basic = 0, supplementary = 0, reinforced = 6, double = 0 }
creepage_mm = { functional = 0, basic = 0, supplementary = 0, reinforced = 0, double = 0 }
"#;
const HOUSE_CREEPAGE_9: &str = r#"
id = "limits.minimum-distances"
overrides = true
title = "House minimum distances (test team policy)"
source = "invented house policy for the tests: reinforced creepage at least 9 mm"
provenance = "House rule, no published source."
clearance_mm = { functional = 0, basic = 0, supplementary = 0, reinforced = 0, double = 0 }
creepage_mm = { functional = 0, basic = 0, supplementary = 0, reinforced = 9, double = 0 }
"#;
const HOUSE_CREEPAGE_8: &str = r#"
id = "limits.minimum-distances"
overrides = true
title = "House minimum distances (test team policy)"
source = "invented house policy for the tests: reinforced creepage at least 8 mm"
provenance = "House rule, no published source."
clearance_mm = { functional = 0, basic = 0, supplementary = 0, reinforced = 0, double = 0 }
creepage_mm = { functional = 0, basic = 0, supplementary = 0, reinforced = 8, double = 0 }
"#;
const HOUSE_FUNCTIONAL_3: &str = r#"
id = "limits.minimum-distances"
overrides = true
title = "House minimum distances (test team policy)"
source = "invented house policy for the tests: functional creepage at least 3 mm"
provenance = "House rule, no published source."
clearance_mm = { functional = 0, basic = 0, supplementary = 0, reinforced = 0, double = 0 }
creepage_mm = { functional = 3, basic = 0, supplementary = 0, reinforced = 0, double = 0 }
"#;
const HOUSE_FUNCTIONAL_2_6: &str = r#"
id = "limits.minimum-distances"
overrides = true
title = "House minimum distances (test team policy)"
source = "invented house policy for the tests: functional creepage at least 2.6 mm"
provenance = "House rule, no published source."
clearance_mm = { functional = 0, basic = 0, supplementary = 0, reinforced = 0, double = 0 }
creepage_mm = { functional = 2.6, basic = 0, supplementary = 0, reinforced = 0, double = 0 }
"#;

// The class2 example's figures that the cases below stand on, worked out from sources:
// * pri-sec and input-output, reinforced at 250 V on a 230 V mains, overvoltage category II:
//   rated impulse 2500 V (IEC 60664-1 Table F.1, confirmed [N20]); reinforced takes the next
//   preferred step, 4000 V (clause 5.1.6, confirmed [TI1]); Table F.2 Case A at 4.0 kV ->
//   3.0 mm clearance (confirmed [N20]). Creepage: printed wiring PD2 at 250 V 1.0 mm, twice
//   for reinforced 2.0 mm, never below the clearance -> 3.0 mm (Table F.5, confirmed [W];
//   doubling confirmed [TI1]; the clearance floor common practice, from memory).
// * input-bulk, functional at 264 V rms = 373 V peak on the outer layer, uncoated:
//   IPC-2221B Table 6-1 B2, 301-500 V -> 2.5 mm (confirmed [SC], [BE], [SM], [D275]).
// * Mains crest at 264 V: sqrt(2) x 264 = 373.35 V (common practice).
const CASES: &[Case] = &[
    // ---- barriers ------------------------------------------------------------------------
    Case {
        id: "barrier.clearance_short",
        base: CLASS2,
        common: &[],
        // 3.0 mm required (above): 2.9 is short, 3.0 meets it.
        raise: &[Set("barrier[pri-sec].clearance_mm", "2.9")],
        clear: &[Set("barrier[pri-sec].clearance_mm", "3.0")],
        also: &[],
    },
    Case {
        id: "barrier.creepage_short",
        base: CLASS2,
        // Off the board, 250 V PD2 material group III: 2.5 mm basic (IEC 60664-1 Table F.5,
        // confirmed [W], [TI1]), 5.0 mm reinforced (twice, confirmed [TI1]). The clearance is
        // set to 4.0 mm so that creepage stays above it in both variants.
        common: &[
            Set("barrier[input-output].printed_board", "false"),
            Set("barrier[input-output].clearance_mm", "4.0"),
        ],
        raise: &[Set("barrier[input-output].creepage_mm", "4.9")],
        clear: &[Set("barrier[input-output].creepage_mm", "5.0")],
        also: &[],
    },
    Case {
        id: "barrier.functional_clearance_short",
        base: CLASS2,
        common: &[],
        // IPC-2221B B2, 301-500 V peak -> 2.5 mm (above).
        raise: &[Set("barrier[input-bulk].clearance_mm", "2.4")],
        clear: &[Set("barrier[input-bulk].clearance_mm", "2.5")],
        also: &[],
    },
    Case {
        id: "barrier.functional_creepage_short",
        base: CLASS2,
        common: &[],
        // IPC-2221B B2 2.5 mm governs over Table F.5's printed-wiring PD2 1.6 mm at 320 V.
        raise: &[Set("barrier[input-bulk].creepage_mm", "2.4")],
        clear: &[Set("barrier[input-bulk].creepage_mm", "2.5")],
        also: &[],
    },
    Case {
        id: "barrier.clearance_missing",
        base: CLASS2,
        common: &[],
        raise: &[Remove("barrier[pri-sec].clearance_mm")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "barrier.creepage_missing",
        base: CLASS2,
        common: &[],
        raise: &[Remove("barrier[pri-sec].creepage_mm")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "barrier.creepage_below_clearance",
        base: CLASS2,
        common: &[],
        // Declared clearance 6.2 mm: a surface path is never shorter (geometry).
        raise: &[Set("barrier[pri-sec].creepage_mm", "6.1")],
        clear: &[Set("barrier[pri-sec].creepage_mm", "6.2")],
        also: &[],
    },
    Case {
        id: "barrier.measured_clearance_short",
        base: BOARD,
        common: &[BOARD_FILES],
        // Measured 6.058 mm (above): a 7 mm floor is not met, a 6 mm one is.
        raise: &[House("minimum-distances.toml", HOUSE_CLEARANCE_7)],
        clear: &[House("minimum-distances.toml", HOUSE_CLEARANCE_6)],
        also: &[],
    },
    Case {
        id: "barrier.measured_creepage_short",
        base: BOARD,
        // Measured 8.196 mm (above): a 9 mm floor is not met, an 8 mm one is. The
        // optocoupler's own creepage is declared above both floors.
        common: &[BOARD_FILES, Set("part[U3].external_creepage_mm", "10")],
        raise: &[House("minimum-distances.toml", HOUSE_CREEPAGE_9)],
        clear: &[House("minimum-distances.toml", HOUSE_CREEPAGE_8)],
        also: &[],
    },
    Case {
        id: "barrier.measured_functional_short",
        base: BOARD,
        // Judged on the measured 2.696 mm alone (above).
        common: &[
            BOARD_FILES,
            Remove("barrier[input-bulk].clearance_mm"),
            Remove("barrier[input-bulk].creepage_mm"),
        ],
        raise: &[House("minimum-distances.toml", HOUSE_FUNCTIONAL_3)],
        clear: &[House("minimum-distances.toml", HOUSE_FUNCTIONAL_2_6)],
        also: &[],
    },
    Case {
        id: "barrier.measured_differs",
        base: BOARD,
        common: &[BOARD_FILES],
        // Measured clearance 6.058 mm (above): 5.0 mm declared is 17 % off, 6.0 mm is 1 %
        // (the 5 % tolerance is the tool's own; common practice, no published source).
        raise: &[Set("barrier[pri-sec].clearance_mm", "5.0")],
        clear: &[Set("barrier[pri-sec].clearance_mm", "6.0")],
        also: &[],
    },
    Case {
        id: "barrier.test_voltage_not_carried",
        base: MEDICAL,
        common: &[],
        // The tool carries the IEC 60601-1 test voltages up to the 354 V peak row only (README,
        // "End-product standards"; IEC 60601-1 and [SLP] in rules/SOURCES.md); above it the
        // test voltage is refused, not guessed.
        raise: &[Set("barrier[pri-sec].working_peak_v", "360")],
        clear: &[Set("barrier[pri-sec].working_peak_v", "354")],
        // The same missing row leaves the optocoupler's test and the barrier's hi-pot open.
        also: &[
            "part.test_voltage_out_of_table",
            "power_entry.test_voltage_beyond_table",
        ],
    },
    Case {
        id: "barrier.high_frequency",
        base: CLASS2,
        common: &[IEC60664],
        // IEC 60664-1 covers up to 30 kHz (scope); a 65 kHz switching waveform is above it.
        raise: &[Set("barrier[pri-sec].working_frequency_hz", "65000")],
        clear: &[Set("barrier[pri-sec].working_frequency_hz", "30000")],
        also: &[],
    },
    Case {
        id: "barrier.slot_too_narrow",
        base: CLASS2,
        common: &[],
        // Pollution degree 2: a groove counts from 1.0 mm (IEC 60664-1 clause 6.2, confirmed
        // [TI1], [HA]; the declared clearance 6.2 mm is above 3 mm, so no reduction).
        raise: &[Set("barrier[pri-sec].slot_width_mm", "0.9")],
        clear: &[Set("barrier[pri-sec].slot_width_mm", "1.0")],
        also: &[],
    },
    Case {
        id: "barrier.house_minimum_applied",
        base: CLASS2,
        // Every reinforced distance the floor touches is declared at 10 mm, so the floor
        // raises the requirement without making anything short.
        common: &[
            Set("barrier[pri-sec].creepage_mm", "10"),
            Set("barrier[input-output].creepage_mm", "10"),
            Set("part[U3].external_creepage_mm", "10"),
        ],
        raise: &[House("minimum-distances.toml", HOUSE_MIN_CREEPAGE)],
        clear: &[],
        also: &[],
    },
    Case {
        id: "barrier.none_declared",
        base: REINFORCED_8MM,
        common: &[],
        raise: &[Remove("barrier")],
        clear: &[],
        // Without barriers nothing separates the hazardous circuit from the output either.
        also: &["isolation.no_barrier"],
    },
    // ---- isolation -----------------------------------------------------------------------
    Case {
        id: "isolation.no_barrier",
        base: CLASS2,
        common: &[],
        // A touchable metal part no barrier is declared to.
        raise: &[Add(
            "[[circuit]]\nid = \"metal-badge\"\nkind = \"safe\"\naccessible = true\nearthed = false\n",
        )],
        clear: &[Add(
            "[[circuit]]\nid = \"metal-badge\"\nkind = \"safe\"\naccessible = false\nearthed = false\n",
        )],
        also: &[],
    },
    Case {
        id: "isolation.insufficient",
        base: CLASS2,
        common: &[],
        // Class II needs double or reinforced insulation to an accessible circuit (IEC
        // 61140, from memory); basic alone is not enough.
        raise: &[Set("barrier[pri-sec].grade", "\"basic\"")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "isolation.means_short",
        base: MEDICAL,
        // IEC 60601-1 (issue 13's rule; rules/SOURCES.md "IEC 60601-1"): the applied part
        // `output` needs 2 MOPP from the mains. Through ac-input -[functional]- primary
        // -[pri-sec]- output, a 2 MOOP pri-sec gives 0 MOPP (operator means do not count
        // toward a patient) and is short; as 2 MOPP it gives 2. Both grades count as
        // reinforced for the protection class, so isolation.insufficient stays quiet.
        common: &[],
        raise: &[Set("barrier[pri-sec].grade", "\"2-moop\"")],
        clear: &[Set("barrier[pri-sec].grade", "\"2-mopp\"")],
        also: &[],
    },
    Case {
        id: "isolation.relies_on_earth",
        base: CLASS1,
        common: &[],
        // The class1 example protects its earthed chassis with basic insulation; with the
        // chassis unearthed and both barriers to it reinforced, no earth is relied on.
        raise: &[],
        clear: &[
            Set("circuit[chassis].earthed", "false"),
            Set("barrier[mains-chassis].grade", "\"reinforced\""),
            Set("barrier[pri-chassis].grade", "\"reinforced\""),
        ],
        also: &[],
    },
    Case {
        id: "isolation.mains_in_class_iii",
        base: "tests/fixtures/iso-class3-mains.toml",
        common: &[],
        raise: &[],
        clear: &[Set("circuit[supply].kind", "\"hazardous\"")],
        also: &[],
    },
    Case {
        id: "isolation.class_iii_supply",
        base: REINFORCED_8MM,
        common: &[],
        raise: &[Set("design.protection_class", "\"III\"")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "isolation.earth_in_class_ii",
        base: CLASS2,
        common: &[],
        raise: &[Set("circuit[output].earthed", "true")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "isolation.no_accessible_circuit",
        base: CLASS2,
        common: &[],
        raise: &[Set("circuit[output].accessible", "false")],
        clear: &[],
        also: &[],
    },
    // ---- the project as a whole ----------------------------------------------------------
    Case {
        id: "input.suspicious_value",
        base: CLASS2,
        common: &[],
        // 640 mm of creepage on a wall adapter's board: 6.4 mm with a slipped decimal point.
        raise: &[Set("barrier[pri-sec].creepage_mm", "640.0")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "power_entry.not_evaluated",
        base: CLASS2,
        common: &[],
        raise: &[Remove("input")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "emc.not_evaluated",
        base: CLASS2,
        common: &[],
        raise: &[Remove("emc")],
        clear: &[],
        also: &[],
    },
    // ---- parts bridging a barrier (class2: T1, U3, CY1 across pri-sec, reinforced) -------
    Case {
        id: "part.kind_not_allowed",
        base: CLASS2,
        common: &[],
        raise: &[Set("part[CY1].kind", "\"resistor\"")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "part.x_capacitor_to_accessible",
        base: CLASS2,
        common: &[],
        // An X-capacitor's failure mode is a short: never across insulation to an
        // accessible part (IEC 60384-14 subclass definitions).
        raise: &[Set("part[CY1].kind", "\"x-capacitor\"")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "part.y_subclass_missing",
        base: CLASS2,
        common: &[],
        raise: &[Remove("part[CY1].subclass")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "part.y_subclass_not_allowed",
        base: CLASS2,
        common: &[],
        // Y2 may bridge basic or supplementary insulation only, Y1 double or reinforced
        // (IEC 60384-14, mostly confirmed; rules/SOURCES.md "Safety capacitors").
        raise: &[Set("part[CY1].subclass", "\"Y2\"")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "part.y_series_accepted",
        base: CLASS2,
        // Two Y2 in series across reinforced insulation: community practice under IEC
        // 60950-1, not universal (rules/SOURCES.md "Safety capacitors"); two Y1 need no note.
        // The note speaks under the IEC 60664-1 basics; under a named end-product standard
        // part.y_series_test_decides speaks instead.
        common: &[IEC60664, Set("part[CY1].count_in_series", "2")],
        raise: &[Set("part[CY1].subclass", "\"Y2\"")],
        clear: &[Set("part[CY1].subclass", "\"Y1\"")],
        also: &[],
    },
    Case {
        id: "part.y_series_test_decides",
        base: CLASS2,
        // The example's IEC 62368-1: two Y2 in series across the reinforced pri-sec barrier
        // are accepted only where they withstand its electric strength test (4000 V peak:
        // Table 25 reinforced at 2500 V and Table 27 mains up to 250 V, one source each);
        // the sources carried do not prove it (rules/SOURCES.md "Safety capacitors"), so it
        // is a warning. Two Y1 may bridge reinforced insulation (IEC 60384-14).
        common: &[Set("part[CY1].count_in_series", "2")],
        raise: &[Set("part[CY1].subclass", "\"Y2\"")],
        clear: &[Set("part[CY1].subclass", "\"Y1\"")],
        also: &[],
    },
    Case {
        id: "part.capacitor_voltage_low",
        base: CLASS2,
        common: &[],
        // The barrier's working voltage is 250 V rms.
        raise: &[Set("part[CY1].rated_ac_v", "240")],
        clear: &[Set("part[CY1].rated_ac_v", "250")],
        also: &[],
    },
    Case {
        id: "part.capacitor_voltage_missing",
        base: CLASS2,
        common: &[],
        raise: &[Remove("part[CY1].rated_ac_v")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "part.isolation_test_low",
        base: CLASS2,
        // At 350 V peak (184-354 V) reinforced insulation is tested at 3000 V rms (IEC
        // 60950-1 Table 5B, confirmed: "3,000 Vrms ... 240 Vrms (340 Vpk)").
        common: &[IEC60664, Set("barrier[pri-sec].working_peak_v", "350")],
        raise: &[Set("part[U3].isolation_test_v_rms", "2900")],
        clear: &[Set("part[U3].isolation_test_v_rms", "3000")],
        also: &[],
    },
    Case {
        id: "part.isolation_test_missing",
        base: CLASS2,
        common: &[],
        raise: &[Remove("part[U3].isolation_test_v_rms")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "part.test_voltage_out_of_table",
        base: CLASS2,
        common: &[IEC60664],
        // IEC 60950-1 Table 5B is carried up to 354 V peak; pri-sec works at 520 V peak.
        raise: &[],
        clear: &[Set("barrier[pri-sec].working_peak_v", "350")],
        // The same missing row leaves the barrier's own hi-pot voltage open.
        also: &["power_entry.test_voltage_beyond_table"],
    },
    Case {
        id: "part.package_clearance_short",
        base: CLASS2,
        common: &[],
        // The barrier needs 3.0 mm clearance (above).
        raise: &[Set("part[U3].external_clearance_mm", "2.9")],
        clear: &[Set("part[U3].external_clearance_mm", "3.0")],
        also: &[],
    },
    Case {
        id: "part.package_creepage_short",
        base: CLASS2,
        common: &[IEC60664],
        // The barrier needs 3.0 mm creepage (above).
        raise: &[Set("part[U3].external_creepage_mm", "2.9")],
        clear: &[Set("part[U3].external_creepage_mm", "3.0")],
        also: &[],
    },
    Case {
        id: "part.package_distances_missing",
        base: CLASS2,
        common: &[],
        raise: &[Remove("part[U3].external_clearance_mm")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "part.insulation_thickness_short",
        base: CLASS2,
        common: &[],
        // 0.4 mm through reinforced solid insulation (IEC 60950-1, confirmed in a CB
        // report; rules/SOURCES.md "Power entry").
        raise: &[Set("part[U3].distance_through_insulation_mm", "0.3")],
        clear: &[Set("part[U3].distance_through_insulation_mm", "0.4")],
        also: &[],
    },
    Case {
        id: "part.insulation_thickness_missing",
        base: CLASS2,
        common: &[],
        raise: &[Remove("part[U3].distance_through_insulation_mm")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "part.transformer_insulation_missing",
        base: CLASS2,
        common: &[],
        raise: &[Remove("part[T1].insulation_system")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "part.transformer_layers_short",
        base: CLASS2,
        // Thin sheets: three layers where any two pass the test (IEC 60950-1:2005 clauses
        // 2.10.5.6-2.10.5.8, confirmed through a quotation).
        common: &[Set("part[T1].insulation_system", "\"tape\"")],
        raise: &[Set("part[T1].tape_layers", "2")],
        clear: &[Set("part[T1].tape_layers", "3")],
        also: &[],
    },
    Case {
        id: "part.transformer_margins_short",
        base: CLASS2,
        // The path runs over both margins: 2 x 1.4 = 2.8 mm < 3.0 mm required creepage,
        // 2 x 1.5 = 3.0 mm meets it (common practice, no published source).
        common: &[
            IEC60664,
            Set("part[T1].insulation_system", "\"margin-tape\""),
            Set("part[T1].tape_layers", "3"),
        ],
        raise: &[Set("part[T1].margin_mm", "1.4")],
        clear: &[Set("part[T1].margin_mm", "1.5")],
        also: &[],
    },
    Case {
        id: "part.transformer_wire_note",
        base: CLASS2,
        common: &[],
        raise: &[],
        clear: &[
            Set("part[T1].insulation_system", "\"tape\""),
            Set("part[T1].tape_layers", "3"),
        ],
        also: &[],
    },
    Case {
        id: "part.thermal_class_exceeded",
        base: CLASS2,
        common: &[],
        // Thermal class B: 130 C (IEC 60085, from memory).
        raise: &[Set("part[T1].hot_spot_c", "131")],
        clear: &[Set("part[T1].hot_spot_c", "130")],
        also: &[],
    },
    Case {
        id: "part.thermal_rating_missing",
        base: CLASS2,
        common: &[],
        raise: &[Remove("part[T1].hot_spot_c")],
        clear: &[],
        also: &[],
    },
    // ---- power entry (class2: 47 uF, 0.5 ohm + NTC 10 / 0.5 ohm + 2.2 ohm filter choke,
    //      470 uH; 0.1 uF X + 0.47 uF damping across the line) ------------------------------
    Case {
        id: "power_entry.fuse_missing",
        base: CLASS2,
        common: &[],
        raise: &[Remove("input.fuse")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "power_entry.rating_missing",
        base: CLASS2,
        common: &[],
        raise: &[Remove("input.bulk_rated_v")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "power_entry.fuse_rating_low",
        base: CLASS2,
        common: &[],
        // At 90 V the converter draws 24 W / 0.86 = 27.9 W, so I_rms >= P / V = 0.31 A
        // whatever the power factor. A 0.4 A fuse may carry 0.75 x 0.4 = 0.3 A (75 %
        // derating, confirmed by a fuse maker's article [LF]): short. The base's 2 A fuse
        // (1.5 A) passes for any power factor above 0.21.
        raise: &[Set("input.fuse.rated_a", "0.4")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "power_entry.fuse_i2t_low",
        base: CLASS2,
        common: &[],
        // Switch-on at the crest: I2t <= V^2 C / (2 R) = 373.35^2 x 47e-6 / (2 x 12.7) =
        // 0.258 A2s (circuit theory); times the pulse factor 5 (consistent with [LF]) =
        // 1.29 A2s. 1.3 A2s clears it; 1.1 A2s is short unless the pulse were below
        // 0.22 A2s (the falling sine after the crest takes off a few per cent).
        raise: &[Set("input.fuse.melting_i2t_a2s", "1.1")],
        clear: &[Set("input.fuse.melting_i2t_a2s", "1.3")],
        also: &[],
    },
    Case {
        id: "power_entry.fuse_pulse_factor_unknown",
        base: CLASS2,
        common: &[],
        // Pulse factors are common practice for time-lag fuses only ([LF]).
        raise: &[Set("input.fuse.speed", "\"fast\"")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "power_entry.fuse_hot_restart_i2t",
        base: CLASS2,
        common: &[],
        // Hot restart: R = 0.5 + 0.5 + 2.2 = 3.2 ohm, I2t <= V^2 C / (2 R) = 1.02 A2s
        // (circuit theory). 1.1 A2s melts on no restart; 0.9 A2s is below the pulse (the
        // L-R-C pulse of the tool is 0.99 A2s, pinned in tests/it/power_entry.rs). Both
        // are below 5 x the switch-on pulse, so fuse_i2t_low is raised in both variants.
        raise: &[Set("input.fuse.melting_i2t_a2s", "0.9")],
        clear: &[Set("input.fuse.melting_i2t_a2s", "1.1")],
        also: &[],
    },
    Case {
        id: "power_entry.fuse_voltage_low",
        base: CLASS2,
        common: &[],
        // The marked rating tops out at 240 V (input.highest_rated_v).
        raise: &[Set("input.fuse.rated_v", "230")],
        clear: &[Set("input.fuse.rated_v", "240")],
        also: &[],
    },
    Case {
        id: "power_entry.fuse_voltage_tolerance",
        base: CLASS2,
        common: &[],
        // 250 V covers the rated 240 V but not the 264 V mains maximum.
        raise: &[],
        clear: &[Set("input.fuse.rated_v", "264")],
        also: &[],
    },
    Case {
        id: "power_entry.fuse_breaking_low",
        base: CLASS2,
        common: &[],
        // Declared prospective fault current 35 A.
        raise: &[Set("input.fuse.breaking_a", "34")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "power_entry.fuse_breaking_unconfirmed",
        base: CLASS2,
        // Without a declared prospective fault current a high-breaking-capacity miniature
        // fuse's figure is assumed (from memory of IEC 60127-2: 1500 A): 35 A is below it,
        // 10 kA above any such assumption.
        common: &[Remove("input.prospective_fault_a")],
        raise: &[],
        clear: &[Set("input.fuse.breaking_a", "10000")],
        also: &[],
    },
    Case {
        id: "power_entry.inrush_over_bridge_surge",
        base: CLASS2,
        common: &[],
        // Series R-L-C step from the 373.35 V crest: R = 12.7 ohm, L = 470 uH, C = 47 uF,
        // alpha = R / 2L = 13511 /s, w0 = 1 / sqrt(LC) = 6728 /s, overdamped: s1 = -1794,
        // s2 = -25228 /s; the peak at ln(s2/s1) / (s1 - s2) = 113 us is
        // V / (L (s1 - s2)) (e^(s1 t) - e^(s2 t)) = 25.7 A (circuit theory).
        raise: &[Set("input.bridge_surge_a", "25")],
        clear: &[Set("input.bridge_surge_a", "26")],
        also: &[],
    },
    Case {
        id: "power_entry.hot_restart_over_bridge_surge",
        base: CLASS2,
        common: &[],
        // Hot: R = 3.2 ohm, zeta = R / (2 sqrt(L/C)) = 0.51, underdamped: alpha = 3404 /s,
        // wd = 5803 /s, i = V / (wd L) e^(-alpha t) sin(wd t) peaks at wd t = atan(wd /
        // alpha) with 64.1 A (circuit theory): above the 50 A rating, below 120 A (which is
        // above even the resistive bound V / R = 116.7 A).
        raise: &[],
        clear: &[Set("input.bridge_surge_a", "120")],
        also: &[],
    },
    Case {
        id: "power_entry.limiter_energy_high",
        base: CLASS2,
        common: &[],
        // E = C V^2 / 2 = 47e-6 x 373.35^2 / 2 = 3.276 J whatever the resistance (circuit
        // theory).
        raise: &[Set("input.limiter.energy_rating_j", "3.2")],
        clear: &[Set("input.limiter.energy_rating_j", "3.3")],
        also: &[],
    },
    Case {
        id: "power_entry.no_inrush_limiter",
        base: CLASS2,
        // 10 ohm of series resistance keep the inrush within the bridge's rating without a
        // limiter, so only the note is new.
        common: &[Set("input.series_resistance_ohm", "10")],
        raise: &[
            Set("input.limiter.kind", "\"none\""),
            Remove("input.limiter.cold_ohm"),
            Remove("input.limiter.hot_ohm"),
            Remove("input.limiter.energy_rating_j"),
        ],
        clear: &[],
        also: &[],
    },
    Case {
        id: "power_entry.bulk_voltage_over_rating",
        base: CLASS2,
        common: &[],
        // Hot restart, zeta = 0.51: a second-order step overshoots by
        // e^(-zeta pi / sqrt(1 - zeta^2)) = 16 %, 373.35 V -> 432 V (circuit theory; the
        // falling sine takes a little off). 410 V is exceeded, 450 V is not.
        raise: &[Set("input.bulk_rated_v", "410")],
        clear: &[Set("input.bulk_rated_v", "450")],
        also: &[],
    },
    Case {
        id: "power_entry.converter_missing",
        base: CLASS2,
        common: &[],
        raise: &[Remove("converter")],
        clear: &[],
        // Without the converter the filter's interaction with it cannot be judged either.
        also: &["emc.middlebrook_not_judged"],
    },
    Case {
        id: "power_entry.load_not_sustained",
        base: CLASS2,
        common: &[],
        // 150 W / 0.86 for a 10 ms half-cycle is 1.74 J; 47 uF at the 90 V crest (125 V
        // after the bridge) holds 47e-6 x 125^2 / 2 = 0.37 J: the bulk collapses.
        raise: &[Set("converter.output_w", "150")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "power_entry.bulk_valley_low",
        base: CLASS2,
        common: &[],
        // Hold-up over a whole half-cycle at 90 V: V^2 = 125.3^2 - 2 x 27.9 W x 10 ms /
        // 47 uF -> 61.9 V, a floor for the valley (the diodes conduct for part of it); 60 V
        // is below it. 100 V is above the simulated valley (84 V; the simulation's energy
        // balance and hold-up are checked by hand in tests/it/power_entry.rs).
        raise: &[Set("converter.min_bulk_v", "100")],
        clear: &[Set("converter.min_bulk_v", "60")],
        also: &[],
    },
    Case {
        id: "power_entry.x_discharge_missing",
        base: CLASS2,
        common: &[],
        // 0.57 uF across the line is above 0.1 uF (IEC 60950-1 clause 2.1.1.7, confirmed
        // through a quotation).
        raise: &[Remove("input.bleeder_ohm")],
        clear: &[],
        // Without a bleeder the capacitor keeps its charge: the residual voltage is then
        // over the limit of the named end-product standard (input.end_product_standard).
        also: &["power_entry.x_residual_high"],
    },
    Case {
        id: "power_entry.x_discharge_slow",
        base: CLASS2,
        common: &[],
        // tau = R C: 1.8 Mohm x 0.57 uF = 1.026 s above, 1.75 Mohm x 0.57 uF = 0.998 s
        // within the 1 s for pluggable type A (IEC 60950-1 clause 2.1.1.7, confirmed).
        raise: &[Set("input.bleeder_ohm", "1.8e6")],
        clear: &[Set("input.bleeder_ohm", "1.75e6")],
        also: &[],
    },
    Case {
        id: "power_entry.x_residual_high",
        base: CLASS2,
        // Type B (10 s allowed) so that only the residual limit (house, 60 V) can fail:
        // V = 373.35 e^(-2 s / tau): 2.1 Mohm -> tau 1.197 s -> 70.2 V above;
        // 1.75 Mohm -> tau 0.998 s -> 50.4 V within.
        common: &[
            Set("input.connection", "\"industrial-plug\""),
            House("power-entry-x-discharge.toml", HOUSE_X_RESIDUAL),
        ],
        raise: &[Set("input.bleeder_ohm", "2.1e6")],
        clear: &[Set("input.bleeder_ohm", "1.75e6")],
        also: &[],
    },
    Case {
        id: "power_entry.x_discharge_not_applicable",
        base: CLASS2,
        common: &[],
        raise: &[Set("input.connection", "\"permanent\"")],
        clear: &[],
        also: &[],
    },
    Case {
        id: "power_entry.x_bleeder_single_fault",
        base: CLASS2,
        common: &[],
        raise: &[],
        clear: &[Set("input.bleeder_fault_tolerant", "true")],
        also: &[],
    },
    Case {
        id: "power_entry.touch_current_high",
        base: CLASS2,
        common: &[],
        // I = 2 pi f V C = 2 pi x 50 x 264 x C; 0.5 mA (IEC 62368-1 ES1, from memory)
        // allows C = 6.028 nF: 6.1 nF exceeds it, 6.0 nF does not.
        raise: &[Set("part[CY1].capacitance_nf", "6.1")],
        clear: &[Set("part[CY1].capacitance_nf", "6.0")],
        also: &[],
    },
    Case {
        id: "power_entry.touch_current_not_judged",
        base: CLASS2,
        common: &[],
        raise: &[Remove("part[CY1].capacitance_nf")],
        clear: &[],
        // The capacitance is one of the input stage's ratings too.
        also: &["power_entry.rating_missing"],
    },
    Case {
        id: "power_entry.electric_strength_tests",
        base: CLASS2,
        common: &[IEC60664],
        // input-output (no declared peak: sqrt(2) x 250 = 354 V) is in Table 5B; at 400 V
        // peak both reinforced barriers are above its last row (354 V).
        raise: &[],
        clear: &[Set("barrier[input-output].working_peak_v", "400")],
        also: &[],
    },
    Case {
        id: "power_entry.test_voltage_beyond_table",
        base: CLASS2,
        common: &[IEC60664],
        raise: &[],
        clear: &[Set("barrier[pri-sec].working_peak_v", "350")],
        also: &["part.test_voltage_out_of_table"],
    },
    // ---- EMC (class2: Class B, 6 dB margin; 195 kHz QP 90 dBuV governs) -----------------
    Case {
        id: "emc.noise_unknown",
        base: "tests/fixtures/emc-empty-table.toml",
        common: &[],
        raise: &[],
        clear: &[Add(
            "[[emc.prescan]]\nfrequency_hz = 195000\nlevel_dbuv = 60\ndetector = \"quasi-peak\"\n",
        )],
        also: &[],
    },
    Case {
        id: "emc.noise_incomplete",
        base: CLASS2,
        // Estimated from the converter: the differential-mode estimate needs the bulk
        // capacitor of [input].
        common: &[Remove("emc.prescan")],
        raise: &[Remove("input")],
        clear: &[],
        also: &["power_entry.not_evaluated"],
    },
    Case {
        id: "emc.attenuation_beyond_two_stages",
        base: CLASS2,
        common: &[],
        // Class B average limit at 195 kHz 53.82 dBuV (CISPR 32, worked in rules/SOURCES.md; a
        // quasi-peak reading is held to it, common practice); required = level - 53.82 + 6:
        // 130 -> 82.18 dB, 127 -> 79.18 dB against about 80 dB for two LC stages (common
        // practice, no published source).
        raise: &[Set("emc.prescan[0].level_dbuv", "130")],
        clear: &[Set("emc.prescan[0].level_dbuv", "127")],
        also: &[],
    },
    Case {
        id: "emc.second_stage_needed",
        base: CLASS2,
        common: &[],
        // 98 -> 50.18 dB, 97.8 -> 49.98 dB against about 50 dB for one stage (common
        // practice, no published source).
        raise: &[Set("emc.prescan[0].level_dbuv", "98")],
        clear: &[Set("emc.prescan[0].level_dbuv", "97.8")],
        also: &[],
    },
    Case {
        id: "emc.dm_corner_above_required",
        base: CLASS2,
        common: &[],
        // 42.18 dB at 195 kHz at 40 dB/decade: corner 195 kHz / 10^(42.18/40) = 17.2 kHz;
        // with 0.1 uF, L >= 1 / ((2 pi 17.2 kHz)^2 x 0.1 uF) = 856 uH (f0 = 1 / (2 pi
        // sqrt(LC)), circuit theory). 470 uH is above the corner, 860 uH below.
        raise: &[],
        clear: &[Set("emc.filter.dm_inductance_uh", "860")],
        also: &[],
    },
    Case {
        id: "emc.cm_corner_above_required",
        base: CLASS2,
        common: &[],
        // Same corner with 1 nF of Y capacitance: L >= 85.6 mH; 33 mH is short, 86 mH not.
        raise: &[],
        clear: &[Set("emc.filter.cm_inductance_mh", "86")],
        also: &[],
    },
    Case {
        id: "emc.y_capacitance_above_touch_limit",
        base: CLASS2,
        common: &[],
        // Same 6.028 nF cap as power_entry.touch_current_high, on the filter's Y capacitance.
        raise: &[Set("emc.filter.y_capacitance_nf", "6.1")],
        clear: &[Set("emc.filter.y_capacitance_nf", "6.0")],
        also: &[],
    },
    Case {
        id: "emc.middlebrook_violated",
        base: CLASS2,
        // Behind a PFC stage the criterion applies; undamped, the 470 uH / 0.1 uF stage
        // peaks without bound (a lossless LC), damped with 47 ohm + 0.47 uF it does not.
        common: &[Set("converter.pfc_stage", "true")],
        raise: &[
            Remove("emc.filter.damping_resistance_ohm"),
            Remove("emc.filter.damping_capacitance_uf"),
        ],
        clear: &[],
        also: &[],
    },
    Case {
        id: "emc.middlebrook_not_judged",
        base: "tests/fixtures/emc-declared-filter.toml",
        common: &[],
        // A declared filter without a [converter]: nothing to compare its output impedance
        // with. With one (behind a PFC stage) it is judged.
        raise: &[],
        clear: &[Add(
            "[converter]\noutput_w = 24\nefficiency = 0.86\nmin_bulk_v = 70\nswitching_hz = 65000\nmax_duty = 0.45\npfc_stage = true\n",
        )],
        also: &[],
    },
    Case {
        id: "emc.middlebrook_not_applicable",
        base: CLASS2,
        common: &[],
        raise: &[],
        clear: &[Set("converter.pfc_stage", "true")],
        also: &[],
    },
    Case {
        id: "emc.noise_over_limit_after_filter",
        base: CLASS2,
        // The common-mode choke is made large enough that only the differential-mode stage
        // decides. 470 uH / 0.1 uF: f0 = 23.2 kHz, asymptote 40 log10(195 / 23.2) = 37 dB at
        // 195 kHz (circuit theory), less with the damping network and the source impedance.
        // Pass needs level - loss <= 53.82 - 6: 84 dBuV fails for any loss below 36.2 dB,
        // 78 dBuV passes for any loss above 30.2 dB.
        common: &[Set("emc.filter.cm_inductance_mh", "100")],
        raise: &[Set("emc.prescan[0].level_dbuv", "84")],
        clear: &[Set("emc.prescan[0].level_dbuv", "78")],
        also: &[],
    },
];

// ---------------------------------------------------------------------------------------
// Running a case
// ---------------------------------------------------------------------------------------

/// A scratch folder removed when dropped.
struct Scratch(PathBuf);

impl Scratch {
    fn new(tag: &str) -> Self {
        let dir = std::env::temp_dir().join(format!(
            "gapwarden-check-fixtures-{}-{tag}",
            std::process::id()
        ));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).expect("scratch folder");
        Scratch(dir)
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

/// One path segment: a key and, for an array of tables, the entry's selector.
fn segment(s: &str) -> (&str, Option<&str>) {
    match s.split_once('[') {
        Some((name, rest)) => (name, Some(rest.trim_end_matches(']'))),
        None => (s, None),
    }
}

/// The table a dotted path's last key lives in, and that key.
fn parent<'a>(
    table: &'a mut toml::Table,
    path: &'a str,
    create: bool,
) -> Result<(&'a mut toml::Table, &'a str), String> {
    let mut parts: Vec<&str> = path.split('.').collect();
    let last = parts.pop().ok_or("empty path")?;
    let mut t = table;
    for part in parts {
        let (name, selector) = segment(part);
        if create && !t.contains_key(name) {
            t.insert(name.to_string(), toml::Value::Table(toml::Table::new()));
        }
        let value = t
            .get_mut(name)
            .ok_or_else(|| format!("{path}: no key {name}"))?;
        t = match (value, selector) {
            (toml::Value::Table(inner), None) => inner,
            (toml::Value::Array(entries), Some(sel)) => {
                let mut matching: Vec<&mut toml::Value> = match sel.parse::<usize>() {
                    Ok(i) => entries.get_mut(i).into_iter().collect(),
                    Err(_) => entries
                        .iter_mut()
                        .filter(|e| {
                            ["id", "ref"]
                                .iter()
                                .any(|k| e.get(*k).and_then(|v| v.as_str()) == Some(sel))
                        })
                        .collect(),
                };
                if matching.len() != 1 {
                    return Err(format!("{path}: {} entries match [{sel}]", matching.len()));
                }
                matching
                    .pop()
                    .and_then(|e| e.as_table_mut())
                    .ok_or_else(|| format!("{path}: [{sel}] is not a table"))?
            }
            _ => return Err(format!("{path}: {name} is not what the path says")),
        };
    }
    Ok((t, last))
}

/// Merges `extra` into `into`: tables key by key, arrays of tables appended.
fn merge(into: &mut toml::Table, extra: toml::Table) {
    for (key, value) in extra {
        match (into.get_mut(&key), value) {
            (Some(toml::Value::Table(a)), toml::Value::Table(b)) => merge(a, b),
            (Some(toml::Value::Array(a)), toml::Value::Array(b)) => a.extend(b),
            (_, value) => {
                into.insert(key, value);
            }
        }
    }
}

/// The base project with the edits applied (as TOML text), and the house files to write.
fn variant(
    base: &str,
    edits: &[Edit],
) -> Result<(String, Vec<(&'static str, &'static str)>), String> {
    let text = std::fs::read_to_string(root().join(base)).map_err(|e| format!("{base}: {e}"))?;
    let mut table: toml::Table = toml::from_str(&text).map_err(|e| format!("{base}: {e}"))?;
    // The variant is written to a scratch folder: the board's files, named relative to the
    // base project, are named from the base's own folder instead.
    let base_dir = root()
        .join(base)
        .parent()
        .map(Path::to_path_buf)
        .unwrap_or_else(|| root().to_path_buf());
    if let Some(files) = table
        .get_mut("board")
        .and_then(|b| b.get_mut("files"))
        .and_then(|f| f.as_array_mut())
    {
        for file in files.iter_mut() {
            if let Some(name) = file.as_str().filter(|n| Path::new(n).is_relative()) {
                *file = toml::Value::String(base_dir.join(name).display().to_string());
            }
        }
    }
    let mut house = Vec::new();
    for edit in edits {
        match *edit {
            Set(path, value) => {
                let parsed: toml::Table = toml::from_str(&format!("v = {value}"))
                    .map_err(|e| format!("{path} = {value}: {e}"))?;
                let value = parsed.get("v").cloned().ok_or("no value")?;
                let (t, key) = parent(&mut table, path, true)?;
                t.insert(key.to_string(), value);
            }
            Remove(path) => {
                let (t, key) = parent(&mut table, path, false)?;
                t.remove(key)
                    .ok_or_else(|| format!("{path}: nothing to remove"))?;
            }
            Add(snippet) => {
                let extra: toml::Table =
                    toml::from_str(snippet).map_err(|e| format!("snippet {snippet:?}: {e}"))?;
                merge(&mut table, extra);
            }
            House(name, content) => house.push((name, content)),
        }
    }
    let out = toml::to_string(&table).map_err(|e| format!("{base}: cannot write TOML: {e}"))?;
    Ok((out, house))
}

/// Checks one variant with the binary and returns its finding ids.
fn finding_ids(case: &Case, which: &str, edits: &[Edit]) -> Result<BTreeSet<String>, String> {
    let (text, house) = variant(case.base, edits).map_err(|e| format!("{}: {e}", case.id))?;
    let scratch = Scratch::new(&format!("{}-{which}", case.id));
    let project = scratch.0.join("project.toml");
    std::fs::write(&project, text).map_err(|e| e.to_string())?;
    let mut args = vec![
        "check".to_string(),
        project.display().to_string(),
        "--format".to_string(),
        "json".to_string(),
    ];
    if !house.is_empty() {
        let dir = scratch.0.join("house");
        std::fs::create_dir_all(&dir).map_err(|e| e.to_string())?;
        for (name, content) in house {
            std::fs::write(dir.join(name), content).map_err(|e| e.to_string())?;
        }
        args.extend(["--rules".to_string(), dir.display().to_string()]);
    }
    let o = run(&args);
    if !matches!(o.status.code(), Some(0 | 1)) {
        return Err(format!(
            "{} ({which}): the check did not run\n{}",
            case.id,
            describe(&o)
        ));
    }
    let report: Value = serde_json::from_slice(&o.stdout)
        .map_err(|e| format!("{} ({which}): stdout is not JSON: {e}", case.id))?;
    let findings = report["findings"]
        .as_array()
        .ok_or_else(|| format!("{} ({which}): no findings array", case.id))?;
    Ok(findings
        .iter()
        .filter_map(|f| f["id"].as_str().map(str::to_string))
        .collect())
}

/// Everything wrong with one case, as lines of a failure message.
fn judge(case: &Case) -> Vec<String> {
    let raise: Vec<Edit> = case.common.iter().chain(case.raise).copied().collect();
    let clear: Vec<Edit> = case.common.iter().chain(case.clear).copied().collect();
    let (raised, cleared) = match (
        finding_ids(case, "raise", &raise),
        finding_ids(case, "clear", &clear),
    ) {
        (Ok(r), Ok(c)) => (r, c),
        (r, c) => return [r.err(), c.err()].into_iter().flatten().collect(),
    };
    let mut problems = Vec::new();
    if !raised.contains(case.id) {
        problems.push(format!(
            "{}: the raising fixture does not raise it; it raises {raised:?}",
            case.id
        ));
    }
    if cleared.contains(case.id) {
        problems.push(format!("{}: the clearing fixture raises it too", case.id));
    }
    let new: BTreeSet<String> = raised.difference(&cleared).cloned().collect();
    let expected: BTreeSet<String> = std::iter::once(case.id)
        .chain(case.also.iter().copied())
        .map(str::to_string)
        .collect();
    if new != expected {
        problems.push(format!(
            "{}: the raising change raises {new:?} beyond the clearing fixture; the case expects {expected:?}",
            case.id
        ));
    }
    problems
}

/// Every `[[check]]` id in rules/checks/*.toml, less the retired ones. Read as plain TOML:
/// the list of ids is what this test covers, not an expected value.
fn shipped_check_ids() -> BTreeSet<String> {
    let dir = root().join("rules/checks");
    let mut ids = BTreeSet::new();
    let mut retired = BTreeSet::new();
    for entry in std::fs::read_dir(&dir).expect("rules/checks") {
        let path = entry.expect("a directory entry").path();
        if path.extension().is_none_or(|x| x != "toml") {
            continue;
        }
        let text = std::fs::read_to_string(&path).expect("a check file");
        let table: toml::Table =
            toml::from_str(&text).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
        let list = |key: &str| -> Vec<String> {
            table
                .get(key)
                .and_then(|v| v.as_array())
                .map(|a| {
                    a.iter()
                        .filter_map(|c| c.get("id").and_then(|v| v.as_str()).map(str::to_string))
                        .collect()
                })
                .unwrap_or_default()
        };
        ids.extend(list("check"));
        retired.extend(list("retired"));
    }
    ids.difference(&retired).cloned().collect()
}

fn short(path: &Path) -> String {
    path.strip_prefix(root())
        .unwrap_or(path)
        .display()
        .to_string()
}

// ---------------------------------------------------------------------------------------
// Tests
// ---------------------------------------------------------------------------------------

#[test]
fn every_shipped_check_has_a_fixture_pair() {
    let shipped = shipped_check_ids();
    assert!(
        shipped.len() > 50,
        "only {} check ids found in {}",
        shipped.len(),
        short(&root().join("rules/checks"))
    );
    let mut covered = BTreeSet::new();
    let mut problems = Vec::new();
    let listed = CASES
        .iter()
        .map(|c| c.id)
        .chain(CANNOT_BE_RAISED.iter().map(|(id, _)| *id));
    for id in listed {
        if !covered.insert(id.to_string()) {
            problems.push(format!("{id} has more than one entry"));
        }
        if !shipped.contains(id) {
            problems.push(format!(
                "{id} has an entry but is not a shipped check (retired or renamed?): remove the entry"
            ));
        }
    }
    for id in shipped.difference(&covered) {
        problems.push(format!(
            "check {id} has no fixture pair: add a Case to CASES in tests/it/check_fixtures.rs \
             (a change to a base project that raises it, and one that does not)"
        ));
    }
    assert!(problems.is_empty(), "{}", problems.join("\n"));
}

#[test]
fn each_check_is_raised_by_its_fixture_and_not_by_its_pair() {
    // Two threads: each case runs the binary twice, and the machine has two cores.
    let halves: Vec<Vec<String>> = std::thread::scope(|s| {
        let (a, b) = CASES.split_at(CASES.len() / 2);
        let handles: Vec<_> = [a, b]
            .into_iter()
            .map(|part| s.spawn(move || part.iter().flat_map(judge).collect::<Vec<_>>()))
            .collect();
        handles
            .into_iter()
            .map(|h| h.join().expect("a worker panicked"))
            .collect()
    });
    let problems: Vec<String> = halves.into_iter().flatten().collect();
    assert!(
        problems.is_empty(),
        "{} problem(s) in the check fixtures:\n{}",
        problems.len(),
        problems.join("\n")
    );
}

#[test]
fn checks_that_cannot_be_raised_are_not_raised_on_their_fixtures() {
    // power_entry.simulation_not_converged: the example, and a load just inside the point
    // where 47 uF can no longer carry it at 90 V (about 61 W).
    let fixtures: &[(&str, &[Edit])] = &[
        (CLASS2, &[]),
        (CLASS2, &[Set("converter.output_w", "61")]),
        (
            CLASS2,
            &[
                Set("input.bulk_capacitance_uf", "4700"),
                Set("converter.output_w", "0.1"),
            ],
        ),
    ];
    for (id, _) in CANNOT_BE_RAISED {
        for (base, edits) in fixtures {
            let case = Case {
                id,
                base,
                common: &[],
                raise: &[],
                clear: &[],
                also: &[],
            };
            let ids = finding_ids(&case, "clear", edits).unwrap_or_else(|e| panic!("{e}"));
            assert!(
                !ids.contains(*id),
                "{id} raised on {base} with {edits:?}: {ids:?}"
            );
        }
    }
}

#[test]
fn the_edit_paths_reach_what_they_name() {
    // The helper itself: a selector by id, by ref and by index, an append and a removal.
    let (text, house) = variant(
        CLASS2,
        &[
            Set("barrier[pri-sec].clearance_mm", "1.5"),
            Set("part[U3].isolation_test_v_rms", "4000"),
            Set("emc.prescan[1].level_dbuv", "70"),
            Remove("input.fuse"),
            Add("[[circuit]]\nid = \"extra\"\nkind = \"safe\"\naccessible = false\nearthed = false\n"),
            House("x.toml", "id = \"x\""),
        ],
    )
    .expect("the edits apply");
    let t: toml::Table = toml::from_str(&text).expect("the variant is TOML");
    let barrier = &t["barrier"].as_array().unwrap()[0];
    assert_eq!(barrier["id"].as_str(), Some("pri-sec"));
    assert_eq!(barrier["clearance_mm"].as_float(), Some(1.5));
    let u3 = t["part"]
        .as_array()
        .unwrap()
        .iter()
        .find(|p| p["ref"].as_str() == Some("U3"))
        .unwrap();
    assert_eq!(u3["isolation_test_v_rms"].as_integer(), Some(4000));
    assert_eq!(t["emc"]["prescan"][1]["level_dbuv"].as_integer(), Some(70));
    assert!(t["input"].get("fuse").is_none());
    assert_eq!(t["circuit"].as_array().unwrap().len(), 4);
    assert_eq!(house, vec![("x.toml", "id = \"x\"")]);
    assert!(variant(CLASS2, &[Remove("input.no_such_key")]).is_err());
    assert!(variant(CLASS2, &[Set("part[Q9].kind", "\"other\"")]).is_err());
}
