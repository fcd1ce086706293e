//! The one integration test crate: every end-to-end, check-value, property and fuzz test of
//! gapwarden, a module per subject. One crate links the library and its dependencies once.

mod common;

mod bad_inputs;
mod batch;
mod board;
mod check_fields;
mod check_fixtures;
mod check_predicates;
mod check_values;
mod cli;
mod commands;
mod emc;
mod explain_items;
mod files;
mod fuzz;
mod gerber_macros;
mod invariants;
mod isolation_parts;
mod json_writer;
mod native_page;
mod output_snapshots;
mod positions;
mod power_entry;
mod properties;
mod report_layout;
mod rule_tables;
mod schema;
mod size_limits;
mod sources;
mod spacing_rules;
mod standards;
mod verdicts;
