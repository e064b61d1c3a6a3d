//! Build script: a digest of the program's own sources for the table cache's
//! keys (`src/cache/key.rs`). Entries hold computed separations, so a build
//! whose code differs in any way (a changed mapping, solver or model) must
//! never take an entry an earlier build wrote, even with the same version
//! number. The digest covers every file under `src/` (the built-in
//! conditions included) and `Cargo.lock` (the libraries' versions); it is
//! FNV-1a over paths and contents, which detects change (it is no security
//! measure: the entries are checksummed on load as well).

use std::path::{Path, PathBuf};

fn files(dir: &Path, out: &mut Vec<PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else { return };
    for entry in entries.flatten() {
        let path = entry.path();
        if path.is_dir() {
            files(&path, out);
        } else {
            out.push(path);
        }
    }
}

fn main() {
    let root = PathBuf::from(std::env::var_os("CARGO_MANIFEST_DIR").expect("cargo sets CARGO_MANIFEST_DIR"));
    let mut paths = Vec::new();
    files(&root.join("src"), &mut paths);
    paths.push(root.join("Cargo.lock"));
    paths.sort();
    let mut hash: u64 = 0xcbf2_9ce4_8422_2325;
    let mut feed = |bytes: &[u8]| {
        for &b in bytes {
            hash ^= u64::from(b);
            hash = hash.wrapping_mul(0x0000_0100_0000_01b3);
        }
    };
    for path in &paths {
        let Ok(contents) = std::fs::read(path) else { continue };
        let name = path.strip_prefix(&root).unwrap_or(path).to_string_lossy().replace('\\', "/");
        feed(name.as_bytes());
        feed(&[0]);
        feed(&(contents.len() as u64).to_le_bytes());
        feed(&contents);
    }
    println!("cargo:rustc-env=PLATESMITH_SOURCE_DIGEST={hash:016x}");
    println!("cargo:rerun-if-changed=src");
    println!("cargo:rerun-if-changed=Cargo.lock");
}
