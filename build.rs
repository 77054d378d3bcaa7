//! The build fingerprint: a hash of the source (every file under `src/`, by relative path and
//! contents), of `Cargo.lock`, `Cargo.toml` and this script, exposed as
//! `RETINUE_BUILD_FINGERPRINT` to the crate. Stores record it, and `--resume` and `merge`
//! refuse parts or shards written by another build (the crate version does not change between
//! development builds). Left out on purpose: the selected profile (debug or release), the
//! features and RUSTFLAGS. rustc does not reorder or contract floating-point operations under
//! any of them, and the `mpi` feature changes only how shards are handed out, so builds that
//! differ only there write the same numbers (the MPI tests merge shards of the MPI build with
//! the plain build). Not covered: the system maths library, which may pick other exp/log
//! variants on other CPUs (last-bit differences between nodes), and files compiled in from
//! outside `src/` (the demo's config and data, the font).

use std::path::{Path, PathBuf};

/// FNV-1a, 64 bits (offset basis 0xcbf29ce484222325, prime 0x100000001b3).
struct Fnv1a(u64);

impl Fnv1a {
    fn new() -> Self {
        Self(0xcbf2_9ce4_8422_2325)
    }

    fn write(&mut self, bytes: &[u8]) {
        for &b in bytes {
            self.0 ^= b as u64;
            self.0 = self.0.wrapping_mul(0x0000_0100_0000_01b3);
        }
    }

    /// A length-prefixed field, so that moving bytes between a name and a file's contents
    /// changes the hash.
    fn field(&mut self, bytes: &[u8]) {
        self.write(&(bytes.len() as u64).to_le_bytes());
        self.write(bytes);
    }
}

/// Every file under `dir`, sorted, so that the hash does not depend on the directory order.
fn files_under(dir: &Path, out: &mut Vec<PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    for e in entries.flatten() {
        let p = e.path();
        if p.is_dir() {
            files_under(&p, out);
        } else {
            out.push(p);
        }
    }
}

fn main() {
    println!("cargo:rerun-if-changed=src");
    println!("cargo:rerun-if-changed=Cargo.lock");
    println!("cargo:rerun-if-changed=Cargo.toml");
    println!("cargo:rerun-if-changed=build.rs");
    let root = PathBuf::from(std::env::var("CARGO_MANIFEST_DIR").expect("set by cargo"));
    let mut files = Vec::new();
    files_under(&root.join("src"), &mut files);
    files.sort();
    for f in ["Cargo.lock", "Cargo.toml", "build.rs"] {
        files.push(root.join(f));
    }
    let mut h = Fnv1a::new();
    for f in &files {
        let rel = f.strip_prefix(&root).unwrap_or(f);
        // `/` on every platform, so a checkout hashes the same on Windows and Unix
        let name: Vec<String> = rel
            .components()
            .map(|c| c.as_os_str().to_string_lossy().into_owned())
            .collect();
        h.field(name.join("/").as_bytes());
        h.field(&std::fs::read(f).unwrap_or_default());
    }
    println!("cargo:rustc-env=RETINUE_BUILD_FINGERPRINT={:016x}", h.0);
}
