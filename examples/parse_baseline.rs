//! The baseline for the whole-process benchmark (scripts/bench-process.sh): a process that
//! only reads and parses a project file's TOML, with the same parser gapwarden uses, and
//! does nothing else. The ratio of `gapwarden check` to this is the cost of everything
//! beyond parsing.

use std::process::ExitCode;

fn main() -> ExitCode {
    let Some(path) = std::env::args().nth(1) else {
        eprintln!("usage: parse_baseline PROJECT.toml");
        return ExitCode::from(2);
    };
    let Ok(text) = std::fs::read_to_string(&path) else {
        eprintln!("{path}: cannot be read");
        return ExitCode::from(2);
    };
    match toml::from_str::<toml::Table>(&text) {
        Ok(table) => {
            println!("{} top-level keys", table.len());
            ExitCode::SUCCESS
        }
        Err(e) => {
            eprintln!("{path}: {e}");
            ExitCode::from(2)
        }
    }
}
