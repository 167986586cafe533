//! Writing a results folder whole or not at all (SPEC §5). Files are built in
//! a temporary folder beside the target, then swapped in:
//! - target absent: one rename;
//! - target present, Linux: renameat2(RENAME_EXCHANGE) swaps the two folders
//!   atomically, then the old one (now at the temporary name) is removed;
//! - elsewhere: a two-step swap, target → `.<name>.outturn-old`, temporary →
//!   target. A crash between the steps leaves the old folder at the `-old`
//!   name and no target; the next run puts it back before doing anything.
//!
//! An interrupt (Ctrl-C) removes the temporary folder and leaves the
//! previous results as they were.

use crate::error::{Error, Result};
use std::path::{Path, PathBuf};
use std::sync::Mutex;

static PENDING: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

/// Remove every temporary folder still registered (called on interrupt).
pub fn cleanup_pending() {
    if let Ok(mut list) = PENDING.lock() {
        for p in list.drain(..) {
            let _ = std::fs::remove_dir_all(p);
        }
    }
}

fn register(p: &Path) {
    if let Ok(mut list) = PENDING.lock() {
        list.push(p.to_path_buf());
    }
}

fn unregister(p: &Path) {
    if let Ok(mut list) = PENDING.lock() {
        list.retain(|x| x != p);
    }
}

fn sibling(target: &Path, suffix: &str) -> PathBuf {
    let name = target
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_else(|| "results".into());
    target.with_file_name(format!(".{name}.outturn-{suffix}"))
}

/// Put back a folder left at the `-old` name by a crash in the middle of a
/// two-step swap, and clear temporary debris of earlier interrupted runs.
pub fn recover(target: &Path) {
    let old = sibling(target, "old");
    if old.is_dir() && !target.exists() {
        let _ = std::fs::rename(&old, target);
    } else if old.is_dir() {
        let _ = std::fs::remove_dir_all(&old);
    }
}

#[cfg(target_os = "linux")]
fn exchange(a: &Path, b: &Path) -> bool {
    use std::os::unix::ffi::OsStrExt;
    let (Ok(ca), Ok(cb)) = (
        std::ffi::CString::new(a.as_os_str().as_bytes()),
        std::ffi::CString::new(b.as_os_str().as_bytes()),
    ) else {
        return false;
    };
    // SAFETY: both paths are valid NUL-terminated strings; renameat2 only reads them.
    let rc = unsafe {
        libc::syscall(
            libc::SYS_renameat2,
            libc::AT_FDCWD,
            ca.as_ptr(),
            libc::AT_FDCWD,
            cb.as_ptr(),
            libc::RENAME_EXCHANGE,
        )
    };
    rc == 0
}

#[cfg(not(target_os = "linux"))]
fn exchange(_a: &Path, _b: &Path) -> bool {
    false
}

/// Write `files` (name, bytes) as the folder `target`, replacing an earlier
/// results folder only when every file has been written.
pub fn write_folder(target: &Path, files: &[(String, Vec<u8>)]) -> Result<()> {
    if let Some(parent) = target.parent().filter(|p| !p.as_os_str().is_empty()) {
        std::fs::create_dir_all(parent)
            .map_err(|e| Error::io(format!("cannot create {}", parent.display()), e))?;
    }
    recover(target);
    if target.exists() {
        let is_ours = target.join("manifest.json").is_file();
        let is_empty = std::fs::read_dir(target)
            .map(|mut d| d.next().is_none())
            .unwrap_or(false);
        if !target.is_dir() || !(is_ours || is_empty) {
            return Err(Error::Run(format!(
                "{} exists and is not an outturn results folder (no manifest.json); refusing to replace it — choose another --out",
                target.display()
            )));
        }
    }
    let tmp = sibling(target, &format!("tmp-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&tmp);
    register(&tmp);
    let result = (|| -> Result<()> {
        std::fs::create_dir(&tmp)
            .map_err(|e| Error::io(format!("cannot create {}", tmp.display()), e))?;
        for (name, bytes) in files {
            let path = tmp.join(name);
            std::fs::write(&path, bytes)
                .map_err(|e| Error::io(format!("cannot write {}", path.display()), e))?;
        }
        if let Ok(f) = std::fs::File::open(&tmp) {
            let _ = f.sync_all();
        }
        if !target.exists() {
            std::fs::rename(&tmp, target).map_err(|e| {
                Error::io(format!("cannot move results into {}", target.display()), e)
            })?;
        } else if exchange(&tmp, target) {
            // The old results now sit at the temporary name.
            let _ = std::fs::remove_dir_all(&tmp);
        } else {
            let old = sibling(target, "old");
            std::fs::rename(target, &old)
                .map_err(|e| Error::io(format!("cannot move aside {}", target.display()), e))?;
            if let Err(e) = std::fs::rename(&tmp, target) {
                let _ = std::fs::rename(&old, target);
                return Err(Error::io(
                    format!("cannot move results into {}", target.display()),
                    e,
                ));
            }
            let _ = std::fs::remove_dir_all(&old);
        }
        Ok(())
    })();
    if result.is_err() {
        let _ = std::fs::remove_dir_all(&tmp);
    }
    unregister(&tmp);
    result
}
