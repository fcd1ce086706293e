//! The rule book's tables: every type that implements `rules::Table` (found by build.rs,
//! listed in `rules::TABLE_TYPES`) reads and checks its shipped file, as the run reads it
//! (from the value tree build.rs wrote) and as a house file would be (TOML, checked), the
//! two readings equal; every shipped table file has a type;
//! a house table is checked when the rule book is loaded, whether or not a design asks for
//! it; a missing table is a clear error. Nothing here takes a figure from `rules/`: the
//! tables' values are checked in `check_values.rs` and `standards.rs` against their sources.

use gapwarden::rules::{RuleBook, SHIPPED_RULES, TABLE_TYPES, TableStore, table};
use gapwarden::standards::{StandardRules, StandardTable};

#[test]
fn every_table_type_reads_and_checks_its_shipped_file() {
    assert!(TABLE_TYPES.len() >= 20, "build.rs found the table types");
    for kind in TABLE_TYPES {
        if let Err(d) = table::check_shipped(kind) {
            panic!("{} ({}): {d}", kind.id, kind.name);
        }
    }
}

#[test]
fn every_end_product_standard_table_reads_and_checks_its_shipped_file() {
    for id in StandardRules::IDS {
        if let Err(d) = table::check_shipped_as::<StandardTable>(id, StandardTable::check) {
            panic!("{id}: {d}");
        }
    }
}

/// A run reads a shipped table from the value tree build.rs wrote, not from its TOML: the
/// typed table must be the one the TOML parser makes of the file, every float to the last
/// bit (`{:?}` writes each so that it reads back as the same `f64`).
#[test]
fn every_shipped_table_reads_from_its_tree_as_from_its_toml() {
    for kind in TABLE_TYPES {
        let (as_run, as_toml) = table::shipped_readings(kind)
            .unwrap_or_else(|d| panic!("{} ({}): {d}", kind.id, kind.name));
        assert!(as_toml.len() > 100, "{}: {as_toml}", kind.id);
        assert_eq!(as_run, as_toml, "{} ({})", kind.id, kind.name);
    }
    for id in StandardRules::IDS {
        let (as_run, as_toml) =
            table::shipped_readings_as::<StandardTable>(id).unwrap_or_else(|d| panic!("{id}: {d}"));
        assert!(as_toml.contains("rows"), "{id}: {as_toml}");
        assert_eq!(as_run, as_toml, "{id}");
    }
}

#[test]
fn every_shipped_table_file_has_a_type_and_no_two_types_share_an_id() {
    let mut ids: Vec<&str> = TABLE_TYPES.iter().map(|k| k.id).collect();
    ids.sort_unstable();
    let before = ids.len();
    ids.dedup();
    assert_eq!(ids.len(), before, "two table types share an id: {ids:?}");
    for rule in SHIPPED_RULES {
        // Check files and the retired-id list live under checks/; the standards' tables
        // are one generic type under the ids the standards' modules name.
        if rule.is_checks || rule.name.starts_with("checks/") {
            continue;
        }
        let typed = ids.contains(&rule.id) || StandardRules::IDS.contains(&rule.id);
        assert!(
            typed,
            "rules/{} (id {}) has no table type",
            rule.name, rule.id
        );
    }
}

#[test]
fn a_missing_table_is_a_clear_error() {
    let store = TableStore::default();
    let err = store
        .by_id::<StandardTable>("iec62368-1.table-10", StandardTable::check)
        .expect_err("an empty store has no tables");
    assert_eq!(
        err.message,
        "no rule table with id \"iec62368-1.table-10\" is loaded"
    );
}

/// A house folder under the system temp folder, removed when dropped.
struct House(std::path::PathBuf);

impl House {
    fn new(tag: &str, name: &str, text: &str) -> Self {
        let dir = std::env::temp_dir().join(format!(
            "gapwarden-rule-tables-{}-{tag}",
            std::process::id()
        ));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).unwrap();
        std::fs::write(dir.join(name), text).unwrap();
        House(dir)
    }
}

impl Drop for House {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

/// An invented house mains-defaults table (no published figure); `[tolerance]` on line 7.
fn house_mains_defaults(tolerance: &str) -> String {
    format!(
        "id = \"power-entry.mains-defaults\"\n\
         title = \"House mains defaults\"\n\
         source = \"invented for the tests\"\n\
         provenance = \"House rule, no published source.\"\n\
         overrides = true\n\
         \n\
         [tolerance]\n\
         value = {tolerance}\n\
         source = \"invented\"\n\
         \n\
         [low_frequency_hz]\n\
         value = 50.0\n\
         source = \"invented\"\n\
         \n\
         [high_frequency_hz]\n\
         value = 60.0\n\
         source = \"invented\"\n"
    )
}

#[test]
fn a_house_table_no_design_asks_for_is_still_checked_at_load_with_line_and_key() {
    // A tolerance of 1.5 is not a fraction below 1: the table's own check refuses it.
    let house = House::new("mains", "mains.toml", &house_mains_defaults("1.5"));
    let problems = match RuleBook::load(Some(&house.0)) {
        Ok(_) => panic!("the house table was accepted"),
        Err(p) => p.0,
    };
    assert_eq!(problems.len(), 1, "{problems:#?}");
    let d = &problems[0];
    assert!(d.file.ends_with("mains.toml"), "{d}");
    // The table's check names the `tolerance` table, which the parser places at its header.
    assert_eq!(d.line, Some(7), "{d}");
    assert_eq!(d.key.as_deref(), Some("tolerance"), "{d}");
    assert!(d.message.contains("fraction"), "{d}");
}

#[test]
fn a_house_table_replaces_the_shipped_one_for_evaluation() {
    // 0.2 is an invented house tolerance, not a published figure.
    let house = House::new("mains-ok", "mains.toml", &house_mains_defaults("0.2"));
    let book = RuleBook::load(Some(&house.0)).expect("the house table is accepted");
    let read = book.table::<gapwarden::power_entry::tables::MainsDefaults>();
    assert_eq!(read.tolerance.value, 0.2);
    assert_eq!(read.title, "House mains defaults");
}
