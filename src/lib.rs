//! gapwarden: a pre-review checklist for the insulation of mains-connected power supplies.
//! The library owns the whole engine; the binary only parses the command line.

pub mod batch;
pub mod checks;
pub mod commands;
pub mod compare;
pub mod diag;
pub mod emc;
pub mod isolation;
pub mod memory_guard;
pub mod parts;
pub mod power_entry;
pub mod project;
pub mod report;
pub mod rules;
pub mod spacing;
pub mod toml_read;

use std::path::Path;

/// Lower-case hex SHA-256 of some bytes.
pub fn sha256_hex(bytes: &[u8]) -> String {
    use sha2::{Digest, Sha256};
    let digest = Sha256::digest(bytes);
    digest.iter().map(|b| format!("{b:02x}")).collect()
}

/// Reads a text file, with a message a designer understands when that fails; `name` is
/// how the file is named in the message (as given, never made absolute). A byte that is
/// not UTF-8 is located by line and column.
pub fn read_text(path: &Path, name: &str) -> Result<String, diag::Diagnostic> {
    let fail = |m: String| diag::Diagnostic::new(name, m);
    if path.is_dir() {
        return Err(fail("is a folder, not a file".to_string()));
    }
    let bytes = std::fs::read(path).map_err(|e| match e.kind() {
        std::io::ErrorKind::NotFound => fail("no such file".to_string()),
        std::io::ErrorKind::PermissionDenied => {
            fail("permission denied: the file cannot be read".to_string())
        }
        _ => fail(format!("cannot be read: {e}")),
    })?;
    String::from_utf8(bytes).map_err(|e| {
        let valid = e.utf8_error().valid_up_to();
        let before = String::from_utf8_lossy(&e.as_bytes()[..valid]).to_string();
        let line = before.matches('\n').count() + 1;
        let column = before.rsplit('\n').next().map_or(0, |l| l.chars().count()) + 1;
        diag::Diagnostic {
            line: Some(line),
            column: Some(column),
            ..fail(
                "is not valid UTF-8 text here (a byte that is not UTF-8); save the file as UTF-8"
                    .to_string(),
            )
        }
    })
}
