//! Build script: an identifier of this build's code, so the resume cache
//! never hands a cell computed by one build to another (the version string
//! stays the same across many builds). It hashes every file under src/ and
//! templates/, Cargo.toml, Cargo.lock, the compiler's version and the
//! profile, with FNV-1a (a cache key, not a security measure).

use std::path::Path;

fn fnv(hash: &mut u64, bytes: &[u8]) {
    for b in bytes {
        *hash ^= u64::from(*b);
        *hash = hash.wrapping_mul(0x0000_0100_0000_01b3);
    }
}

fn files(dir: &Path, out: &mut Vec<std::path::PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
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
    let mut hash: u64 = 0xcbf2_9ce4_8422_2325;
    let mut all = Vec::new();
    for dir in ["src", "templates"] {
        files(Path::new(dir), &mut all);
        println!("cargo:rerun-if-changed={dir}");
    }
    all.push("Cargo.toml".into());
    all.push("Cargo.lock".into());
    println!("cargo:rerun-if-changed=Cargo.toml");
    println!("cargo:rerun-if-changed=Cargo.lock");
    all.sort();
    for path in &all {
        fnv(&mut hash, path.to_string_lossy().as_bytes());
        fnv(&mut hash, &std::fs::read(path).unwrap_or_default());
    }
    let rustc = std::env::var("RUSTC").unwrap_or_else(|_| "rustc".into());
    if let Ok(out) = std::process::Command::new(rustc).arg("-V").output() {
        fnv(&mut hash, &out.stdout);
    }
    fnv(
        &mut hash,
        std::env::var("PROFILE").unwrap_or_default().as_bytes(),
    );
    fnv(
        &mut hash,
        std::env::var("TARGET").unwrap_or_default().as_bytes(),
    );
    println!("cargo:rustc-env=OUTTURN_BUILD_ID={hash:016x}");
}
