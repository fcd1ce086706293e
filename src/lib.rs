//! gapwarden: a pre-review checklist for the insulation of mains-connected power supplies.
//! The library owns the whole engine; the binary only parses the command line.

pub mod area;
pub mod batch;
pub mod block_pool;
pub mod board;
pub mod checks;
pub mod commands;
pub mod compare;
pub mod derivation;
pub mod diag;
pub mod emc;
mod exit_status;
pub mod hints;
pub mod input_limits;
pub mod insulation;
pub mod memory_guard;
pub mod power_entry;
pub mod project;
pub mod pruned;
pub mod raw;
pub mod report;
pub mod rules;
pub mod schema;
pub mod standards;
pub mod terminal;
pub mod text;

pub use exit_status::ExitStatus;
// The insulation area's modules keep the paths they always had.
pub use insulation::{isolation, parts, spacing};

use std::path::Path;

/// Lower-case hex SHA-256 of some bytes.
pub fn sha256_hex(bytes: &[u8]) -> String {
    use sha2::{Digest, Sha256};
    const HEX: &[u8; 16] = b"0123456789abcdef";
    let digest = Sha256::digest(bytes);
    let mut hex = String::with_capacity(2 * digest.len());
    for b in digest {
        hex.push(char::from(HEX[usize::from(b >> 4)]));
        hex.push(char::from(HEX[usize::from(b & 0xf)]));
    }
    hex
}

/// The largest input file gapwarden reads (project, house rule and template files): 16 MiB.
/// A real design is a few kilobytes; the limit only stops a runaway or hostile file from
/// filling memory.
pub const MAX_INPUT_BYTES: u64 = 16 * 1024 * 1024;

/// What a path is when it is not a regular file, in words for a message.
pub fn kind_of_special(file_type: &std::fs::FileType) -> &'static str {
    use std::os::unix::fs::FileTypeExt;
    if file_type.is_dir() {
        "a folder"
    } else if file_type.is_fifo() {
        "a named pipe (FIFO)"
    } else if file_type.is_char_device() {
        "a character device"
    } else if file_type.is_block_device() {
        "a block device"
    } else if file_type.is_socket() {
        "a socket"
    } else if file_type.is_symlink() {
        "a symbolic link"
    } else {
        "not a regular file"
    }
}

/// Reads a text file, with a message a designer understands when that fails; `name` is
/// how the file is named in the message (as given, never made absolute). Only a regular
/// file (or a link to one) is read: a named pipe would wait for ever and a device such as
/// `/dev/zero` never ends, so both are refused before they are opened, and nothing above
/// `MAX_INPUT_BYTES` is read. A byte that is not UTF-8 is located by line and column.
pub fn read_text(path: &Path, name: &str) -> Result<String, diag::Diagnostic> {
    use std::io::Read;
    let fail = |m: String| diag::Diagnostic::new(name, m);
    let io_fail = |e: std::io::Error| match e.kind() {
        std::io::ErrorKind::NotFound => fail("no such file".to_string()),
        std::io::ErrorKind::PermissionDenied => {
            fail("permission denied: the file cannot be read".to_string())
        }
        _ => fail(format!("cannot be read: {e}")),
    };
    let special = |file_type: &std::fs::FileType| {
        if file_type.is_dir() {
            fail("is a folder, not a file".to_string())
        } else {
            fail(format!(
                "is {}, not a regular file; gapwarden reads only regular files",
                kind_of_special(file_type)
            ))
        }
    };
    let too_large = |len: u64| {
        fail(format!(
            "is {len} bytes ({:.1} MiB); gapwarden reads files of at most {MAX_INPUT_BYTES} \
             bytes (16 MiB)",
            len as f64 / (1024.0 * 1024.0)
        ))
    };
    // Looked at before opening: opening a named pipe for reading already waits for a writer.
    let meta = std::fs::metadata(path).map_err(io_fail)?;
    if !meta.file_type().is_file() {
        return Err(special(&meta.file_type()));
    }
    if meta.len() > MAX_INPUT_BYTES {
        return Err(too_large(meta.len()));
    }
    let file = std::fs::File::open(path).map_err(io_fail)?;
    // Looked at again on the open file, in case the path was swapped in between.
    let meta = file.metadata().map_err(io_fail)?;
    if !meta.file_type().is_file() {
        return Err(special(&meta.file_type()));
    }
    let mut bytes = Vec::with_capacity(meta.len().min(MAX_INPUT_BYTES) as usize);
    // One byte past the limit tells a file that grew while being read from one that fits.
    file.take(MAX_INPUT_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(io_fail)?;
    if bytes.len() as u64 > MAX_INPUT_BYTES {
        return Err(fail(format!(
            "grew past {MAX_INPUT_BYTES} bytes (16 MiB) while being read; gapwarden reads \
             files of at most that size"
        )));
    }
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

#[cfg(test)]
mod tests {
    /// FIPS 180-2, Appendix B.1 and B.2: the SHA-256 of "abc" and of the 56-byte message,
    /// in lower-case hex as reports print it.
    #[test]
    fn file_hashes_print_as_the_published_examples() {
        assert_eq!(
            super::sha256_hex(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
        assert_eq!(
            super::sha256_hex(b"abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq"),
            "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1"
        );
    }
}
