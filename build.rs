//! Embeds every shipped rule file (`rules/**/*.toml`) and template (`templates/*.j2`) in
//! the binary, so a new file needs no list kept by hand.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

fn files(dir: &Path, extension: &str, out: &mut Vec<PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    let mut paths: Vec<PathBuf> = entries.filter_map(|e| e.ok().map(|e| e.path())).collect();
    paths.sort();
    for path in paths {
        if path.is_dir() {
            files(&path, extension, out);
        } else if path.extension().is_some_and(|x| x == extension) {
            out.push(path);
        }
    }
}

fn list(name: &str, root: &Path, extension: &str) -> String {
    let mut found = Vec::new();
    files(root, extension, &mut found);
    let mut code = format!("pub const {name}: &[(&str, &str)] = &[\n");
    for path in found {
        let inside = path
            .strip_prefix(root)
            .unwrap_or(&path)
            .to_string_lossy()
            .replace('\\', "/");
        let absolute = std::fs::canonicalize(&path).unwrap_or(path.clone());
        let _ = writeln!(
            code,
            "    ({inside:?}, include_str!({:?})),",
            absolute.to_string_lossy()
        );
    }
    code.push_str("];\n");
    code
}

fn main() {
    let manifest =
        PathBuf::from(std::env::var("CARGO_MANIFEST_DIR").unwrap_or_else(|_| ".".into()));
    let out = PathBuf::from(std::env::var("OUT_DIR").unwrap_or_else(|_| ".".into()));
    for (file, name, folder, extension) in [
        ("shipped_rules.rs", "SHIPPED_RULES", "rules", "toml"),
        (
            "shipped_templates.rs",
            "SHIPPED_TEMPLATES",
            "templates",
            "j2",
        ),
    ] {
        let code = list(name, &manifest.join(folder), extension);
        if let Err(e) = std::fs::write(out.join(file), code) {
            panic!("cannot write the embedded file list {file}: {e}");
        }
    }
    println!("cargo:rerun-if-changed=rules");
    println!("cargo:rerun-if-changed=templates");
}
