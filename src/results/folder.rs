//! Writing a results folder whole or not at all (SPEC §5). Files are built in
//! a temporary folder beside the target (`.<name>.outturn-tmp-<pid>`), each
//! synced to disk, then swapped in:
//! - target absent: one rename;
//! - target present, Linux: renameat2(RENAME_EXCHANGE) swaps the two folders
//!   atomically, then the old one (now at the temporary name) is removed;
//! - elsewhere (or where the file system refuses the exchange): a two-step
//!   swap, target → `.<name>.outturn-old`, temporary → target. A crash
//!   between the steps leaves the old folder at the `-old` name and no
//!   target; the next run puts it back ([`recover`]) before doing anything.
//!
//! An interrupt (Ctrl-C) calls [`cleanup_pending`]: it waits for a write in
//! progress to stop at its next step (it never stops a swap half-way), then
//! removes the temporary folder, so the previous results stay as they were
//! and no debris is left. Temporary folders of runs killed outright
//! (SIGKILL, power loss) are removed by the next run into the same target,
//! once their process no longer exists.

use crate::error::{Error, Result};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Mutex;

static PENDING: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());
/// Held for the whole of a write; an interrupt waits for it.
static WRITING: Mutex<()> = Mutex::new(());
/// Set by an interrupt: a write in progress stops at its next step.
static INTERRUPTED: AtomicBool = AtomicBool::new(false);

/// Set once a results folder of this process has been swapped in.
static SWAPPED: AtomicBool = AtomicBool::new(false);

/// Stop any write in progress and remove every temporary folder still
/// registered (called on interrupt, before the process exits). True when
/// this process had already swapped its results folder in (it is whole).
pub fn cleanup_pending() -> bool {
    INTERRUPTED.store(true, Ordering::SeqCst);
    // Wait for a write in progress to notice the flag (or to finish its swap).
    let _guard = WRITING.lock().unwrap_or_else(|e| e.into_inner());
    if let Ok(mut list) = PENDING.lock() {
        for p in list.drain(..) {
            let _ = std::fs::remove_dir_all(p);
        }
    }
    let swapped = SWAPPED.load(Ordering::SeqCst);
    if !swapped {
        remove_created();
    }
    swapped
}

/// A scratch folder to remove if the process is interrupted (`verify`'s rerun).
pub fn register_scratch(p: &Path) {
    register(p);
}

/// The scratch folder is gone or kept on purpose: an interrupt leaves it alone.
pub fn unregister_scratch(p: &Path) {
    unregister(p);
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

fn folder_name(target: &Path) -> String {
    target
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_else(|| "results".into())
}

fn sibling(target: &Path, suffix: &str) -> PathBuf {
    target.with_file_name(format!(".{}.outturn-{suffix}", folder_name(target)))
}

/// Whether process `pid` still exists (a temporary folder of a live run must
/// not be touched).
fn process_alive(pid: u32) -> bool {
    #[cfg(unix)]
    {
        let Ok(pid) = libc::pid_t::try_from(pid) else {
            return false;
        };
        // SAFETY: kill with signal 0 only checks that the process exists.
        let rc = unsafe { libc::kill(pid, 0) };
        rc == 0 || std::io::Error::last_os_error().raw_os_error() == Some(libc::EPERM)
    }
    #[cfg(not(unix))]
    {
        let _ = pid;
        true
    }
}

/// Put back a folder left at the `-old` name by a crash in the middle of a
/// two-step swap, and clear temporary folders of earlier runs into the same
/// target whose process has gone.
pub fn recover(target: &Path) {
    let old = sibling(target, "old");
    if old.is_dir() && !target.exists() {
        let _ = std::fs::rename(&old, target);
    } else if old.is_dir() {
        // The swap's second step happened: the target is the newer folder.
        let _ = std::fs::remove_dir_all(&old);
    }
    let parent = match target.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let prefix = format!(".{}.outturn-tmp-", folder_name(target));
    let Ok(entries) = std::fs::read_dir(&parent) else {
        return;
    };
    for entry in entries.flatten() {
        let name = entry.file_name().to_string_lossy().to_string();
        let Some(pid) = name
            .strip_prefix(&prefix)
            .and_then(|p| p.parse::<u32>().ok())
        else {
            continue;
        };
        if pid != std::process::id() && !process_alive(pid) {
            let _ = std::fs::remove_dir_all(entry.path());
        }
    }
}

/// The most a manifest of ours can hold (a few hundred bytes per cell).
const MAX_MANIFEST_BYTES: u64 = 2 << 30;

/// The files a folder's manifest says outturn wrote there (itself
/// included), or why the folder is not one of outturn's.
fn our_files(target: &Path) -> std::result::Result<Vec<String>, String> {
    let path = target.join("manifest.json");
    let meta =
        std::fs::symlink_metadata(&path).map_err(|_| "it has no manifest.json".to_string())?;
    if !meta.is_file() || meta.len() > MAX_MANIFEST_BYTES {
        return Err("its manifest.json is not a manifest outturn writes".into());
    }
    let open =
        || std::fs::File::open(&path).map_err(|e| format!("its manifest.json cannot be read: {e}"));
    let mut files: Vec<String> = match super::manifest::Digest::from_reader(open()?) {
        Ok(m) => m.outputs.into_iter().map(|o| o.file).collect(),
        Err(results) => match std::fs::read(&path)
            .map_err(|e| e.to_string())
            .and_then(|bytes| super::shard::ShardManifest::from_bytes(&bytes))
        {
            Ok(m) => m.outputs.into_iter().map(|o| o.file).collect(),
            Err(_) => {
                return Err(format!(
                    "its manifest.json is not one outturn wrote ({results})"
                ))
            }
        },
    };
    files.push("manifest.json".into());
    Ok(files)
}

/// Refuse a target that outturn may not replace: anything but an empty
/// folder or a folder outturn wrote — its manifest (results or shard)
/// reads as ours and lists every file in it. Links are never followed: a
/// results path that is a symbolic link is refused, so whatever it points
/// at is left alone. Cheap, so a run can call it before any work.
pub fn check_target(target: &Path) -> Result<()> {
    let refuse = |why: String| {
        Err(Error::NotOurs {
            path: target.to_path_buf(),
            why,
        })
    };
    let meta = match std::fs::symlink_metadata(target) {
        Ok(m) => m,
        // A folder left at the `-old` name by a crash counts as the target.
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(()),
        Err(e) => return Err(Error::io(format!("cannot look at {}", target.display()), e)),
    };
    if meta.file_type().is_symlink() {
        return refuse(
            "it is a symbolic link (outturn follows no links; give the folder itself)".into(),
        );
    }
    if !meta.is_dir() {
        return refuse("it is not a folder".into());
    }
    let entries: Vec<String> = std::fs::read_dir(target)
        .map_err(|e| Error::io(format!("cannot list {}", target.display()), e))?
        .flatten()
        .map(|e| e.file_name().to_string_lossy().to_string())
        .collect();
    if entries.is_empty() {
        return Ok(());
    }
    let ours = match our_files(target) {
        Ok(files) => files,
        Err(why) => return refuse(why),
    };
    let mut foreign: Vec<&String> = entries.iter().filter(|e| !ours.contains(e)).collect();
    if !foreign.is_empty() {
        foreign.sort();
        let shown: Vec<&str> = foreign.iter().take(5).map(|s| s.as_str()).collect();
        return refuse(format!(
            "it holds files outturn did not write there ({}{})",
            shown.join(", "),
            if foreign.len() > 5 { ", …" } else { "" }
        ));
    }
    Ok(())
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

fn interrupted() -> Result<()> {
    if INTERRUPTED.load(Ordering::SeqCst) {
        return Err(Error::Interrupted);
    }
    Ok(())
}

/// Get ready to replace `target`: its parent exists, an earlier crash is
/// recovered from, the target is ours to replace, and this process's
/// temporary folder beside it is named, cleared and registered (so an
/// interrupt removes it). The caller creates the folder.
fn prepare(target: &Path) -> Result<PathBuf> {
    if let Some(parent) = target.parent().filter(|p| !p.as_os_str().is_empty()) {
        create_parents(parent)?;
    }
    recover(target);
    if let Err(e) = check_target(target) {
        remove_created();
        return Err(e);
    }
    release_cache(target);
    let tmp = sibling(target, &format!("tmp-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&tmp);
    register(&tmp);
    Ok(tmp)
}

/// Folders this process created to hold its results folder, outermost
/// first: removed again (when still empty) if the run writes nothing.
static CREATED: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

/// Create `parent` and the folders above it that do not exist, remembering them.
fn create_parents(parent: &Path) -> Result<()> {
    let mut missing = Vec::new();
    let mut at = Some(parent);
    while let Some(p) = at.filter(|p| !p.as_os_str().is_empty() && !p.exists()) {
        missing.push(p.to_path_buf());
        at = p.parent();
    }
    std::fs::create_dir_all(parent)
        .map_err(|e| Error::io(format!("cannot create {}", parent.display()), e))?;
    missing.reverse();
    if let Ok(mut list) = CREATED.lock() {
        list.extend(missing);
    }
    Ok(())
}

/// Remove the folders this process created for its results, innermost
/// first and only while empty (anything put there since stays).
fn remove_created() {
    if let Ok(mut list) = CREATED.lock() {
        for p in list.drain(..).rev() {
            let _ = std::fs::remove_dir(p);
        }
    }
}

/// The results are in place: the folders created for them stay.
fn keep_created() {
    if let Ok(mut list) = CREATED.lock() {
        list.clear();
    }
}

/// Write `files` (name, bytes) as the folder `target`, replacing an earlier
/// results folder only when every file has been written.
pub fn write_folder(target: &Path, files: &[(String, Vec<u8>)]) -> Result<()> {
    let _guard = WRITING.lock().unwrap_or_else(|e| e.into_inner());
    interrupted()?;
    let tmp = prepare(target)?;
    let result = (|| -> Result<()> {
        std::fs::create_dir(&tmp)
            .map_err(|e| Error::io(format!("cannot create {}", tmp.display()), e))?;
        for (name, bytes) in files {
            interrupted()?;
            let path = tmp.join(name);
            let write = || -> std::io::Result<()> {
                use std::io::Write;
                let mut f = std::fs::File::create(&path)?;
                f.write_all(bytes)?;
                f.sync_all()
            };
            write().map_err(|e| Error::io(format!("cannot write {}", path.display()), e))?;
        }
        if let Ok(f) = std::fs::File::open(&tmp) {
            let _ = f.sync_all();
        }
        interrupted()?;
        swap(&tmp, target)
    })();
    if result.is_err() {
        let _ = std::fs::remove_dir_all(&tmp);
        remove_created();
    }
    unregister(&tmp);
    result
}

/// Put the finished temporary folder in place of the target. From here on
/// the swap runs to its end; an interrupt waits for it (the caller holds WRITING).
fn swap(tmp: &Path, target: &Path) -> Result<()> {
    swap_folders(tmp, target)?;
    SWAPPED.store(true, Ordering::SeqCst);
    keep_created();
    Ok(())
}

fn swap_folders(tmp: &Path, target: &Path) -> Result<()> {
    if !target.exists() {
        std::fs::rename(tmp, target)
            .map_err(|e| Error::io(format!("cannot move results into {}", target.display()), e))?;
    } else if exchange(tmp, target) {
        // The old results now sit at the temporary name.
        remove_folder(tmp);
    } else {
        two_step_swap(tmp, target)?;
    }
    Ok(())
}

/// A results folder written file by file, for tables too large to hold in
/// memory: files go into the temporary folder ([`Staging::dir`]) while the
/// run goes on, and [`Staging::commit_synced`] swaps it in. Dropping a staging that
/// was not committed removes the temporary folder. An interrupt removes it
/// too (the staging does not hold the write lock until it commits).
pub struct Staging {
    tmp: PathBuf,
    target: PathBuf,
    done: bool,
}

pub fn stage(target: &Path) -> Result<Staging> {
    interrupted()?;
    let tmp = prepare(target)?;
    if let Err(e) = std::fs::create_dir(&tmp) {
        unregister(&tmp);
        remove_created();
        return Err(Error::io(format!("cannot create {}", tmp.display()), e));
    }
    Ok(Staging {
        tmp,
        target: target.to_path_buf(),
        done: false,
    })
}

impl Staging {
    pub fn dir(&self) -> &Path {
        &self.tmp
    }

    /// Swap the folder in. The writer has synced every file it wrote into
    /// it (the folder itself is synced here).
    pub fn commit_synced(mut self) -> Result<()> {
        let _guard = WRITING.lock().unwrap_or_else(|e| e.into_inner());
        interrupted()?;
        if let Ok(f) = std::fs::File::open(&self.tmp) {
            let _ = f.sync_all();
        }
        interrupted()?;
        let result = swap(&self.tmp, &self.target);
        if result.is_ok() {
            self.done = true;
            unregister(&self.tmp);
        }
        result
    }
}

impl Drop for Staging {
    fn drop(&mut self) {
        if !self.done {
            let _ = std::fs::remove_dir_all(&self.tmp);
            unregister(&self.tmp);
            remove_created();
        }
    }
}

/// The swap where no exchange rename exists: target → `-old`, `tmp` →
/// target, then the old folder is removed. See the module docs for the
/// recovery after a crash between the steps.
fn two_step_swap(tmp: &Path, target: &Path) -> Result<()> {
    let old = sibling(target, "old");
    let _ = std::fs::remove_dir_all(&old);
    std::fs::rename(target, &old)
        .map_err(|e| Error::io(format!("cannot move aside {}", target.display()), e))?;
    if let Err(e) = std::fs::rename(tmp, target) {
        let _ = std::fs::rename(&old, target);
        return Err(Error::io(
            format!("cannot move results into {}", target.display()),
            e,
        ));
    }
    remove_folder(&old);
    Ok(())
}

/// Let the kernel drop the cached pages of the folder this run will
/// replace, on a thread of its own while the run goes on: the files stay
/// as they are on disk (a failed run leaves them untouched), and removing
/// them after the swap no longer has to free their pages.
fn release_cache(target: &Path) {
    #[cfg(target_os = "linux")]
    {
        let Ok(entries) = std::fs::read_dir(target) else {
            return;
        };
        let files: Vec<PathBuf> = entries.flatten().map(|e| e.path()).collect();
        let _ = std::thread::Builder::new().spawn(move || {
            use std::os::fd::AsRawFd;
            for path in files {
                if let Ok(f) = std::fs::File::open(&path) {
                    // SAFETY: the descriptor is open for the call; advice
                    // changes caching only, never the file's contents.
                    unsafe {
                        libc::posix_fadvise(f.as_raw_fd(), 0, 0, libc::POSIX_FADV_DONTNEED);
                    }
                }
            }
        });
    }
    #[cfg(not(target_os = "linux"))]
    let _ = target;
}

/// Remove a replaced results folder. Freeing a large file's blocks takes
/// the file system a few milliseconds, so the large files go side by side.
fn remove_folder(dir: &Path) {
    const LARGE: u64 = 1 << 20;
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    let mut large = Vec::new();
    let mut other = Vec::new();
    for entry in entries.flatten() {
        match entry.metadata() {
            Ok(m) if m.is_file() && m.len() >= LARGE => large.push(entry.path()),
            _ => other.push(entry.path()),
        }
    }
    std::thread::scope(|scope| {
        for path in &large {
            // Should no thread start, the file goes with remove_dir_all below.
            let _ = std::thread::Builder::new().spawn_scoped(scope, move || {
                let _ = std::fs::remove_file(path);
            });
        }
        for path in &other {
            if path.is_dir() {
                let _ = std::fs::remove_dir_all(path);
            } else {
                let _ = std::fs::remove_file(path);
            }
        }
    });
    let _ = std::fs::remove_dir_all(dir);
}

#[cfg(test)]
mod tests {
    use super::*;

    fn scratch(name: &str) -> PathBuf {
        let dir =
            std::env::temp_dir().join(format!("outturn-output-{name}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).unwrap();
        dir
    }

    fn files(tag: &str) -> Vec<(String, Vec<u8>)> {
        vec![
            (
                "manifest.json".into(),
                format!("{{\"tag\":\"{tag}\"}}").into_bytes(),
            ),
            ("scores.csv".into(), tag.as_bytes().to_vec()),
        ]
    }

    fn listing(dir: &Path) -> Vec<String> {
        let mut names: Vec<String> = std::fs::read_dir(dir)
            .unwrap()
            .flatten()
            .map(|e| e.file_name().to_string_lossy().to_string())
            .collect();
        names.sort();
        names
    }

    #[test]
    fn the_two_step_swap_replaces_and_leaves_nothing_behind() {
        let dir = scratch("two-step");
        let target = dir.join("res");
        write_folder(&target, &files("one")).unwrap();
        let tmp = sibling(&target, "tmp-test");
        std::fs::create_dir(&tmp).unwrap();
        for (name, bytes) in files("two") {
            std::fs::write(tmp.join(name), bytes).unwrap();
        }
        two_step_swap(&tmp, &target).unwrap();
        assert_eq!(std::fs::read(target.join("scores.csv")).unwrap(), b"two");
        assert_eq!(listing(&dir), vec!["res".to_string()]);
        let _ = std::fs::remove_dir_all(&dir);
    }

    #[test]
    fn stale_temporary_folders_of_dead_runs_are_cleared() {
        let dir = scratch("stale");
        let target = dir.join("res");
        // No process has id u32::MAX - 1 (Linux pids stay below 2^22).
        let stale = sibling(&target, &format!("tmp-{}", u32::MAX - 1));
        std::fs::create_dir(&stale).unwrap();
        std::fs::write(stale.join("scores.csv"), b"half").unwrap();
        write_folder(&target, &files("new")).unwrap();
        assert_eq!(listing(&dir), vec!["res".to_string()]);
        let _ = std::fs::remove_dir_all(&dir);
    }

    #[test]
    fn recover_puts_back_or_clears_a_half_swapped_folder() {
        // A crash after the first step of the two-step swap: the old folder
        // sits at the `-old` name and there is no target; it is put back.
        let dir = scratch("recover");
        let target = dir.join("res");
        write_folder(&target, &files("one")).unwrap();
        let old = sibling(&target, "old");
        std::fs::rename(&target, &old).unwrap();
        recover(&target);
        assert_eq!(std::fs::read(target.join("scores.csv")).unwrap(), b"one");
        assert!(!old.exists());
        // A crash after the second step: the target is the newer folder and
        // the `-old` one is removed.
        std::fs::create_dir(&old).unwrap();
        std::fs::write(old.join("manifest.json"), b"{}").unwrap();
        recover(&target);
        assert!(!old.exists());
        assert_eq!(std::fs::read(target.join("scores.csv")).unwrap(), b"one");
        let _ = std::fs::remove_dir_all(&dir);
    }
}
