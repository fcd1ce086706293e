//! gapwarden: a pre-review checklist for the insulation of mains-connected power supplies.
//! The library owns the whole engine; the binary only parses the command line.

pub mod batch;
pub mod checks;
pub mod commands;
pub mod compare;
pub mod diag;
pub mod emc;
pub mod isolation;
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

/// Reads a text file, with a message a designer understands when that fails.
pub fn read_text(path: &Path) -> Result<String, String> {
    if path.is_dir() {
        return Err("is a folder, not a file".to_string());
    }
    let bytes = std::fs::read(path).map_err(|e| match e.kind() {
        std::io::ErrorKind::NotFound => "no such file".to_string(),
        std::io::ErrorKind::PermissionDenied => {
            "permission denied: the file cannot be read".to_string()
        }
        _ => format!("cannot be read: {e}"),
    })?;
    String::from_utf8(bytes).map_err(|e| {
        format!(
            "is not valid UTF-8 text (first bad byte at offset {}); save it as UTF-8",
            e.utf8_error().valid_up_to()
        )
    })
}
