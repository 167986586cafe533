//! Targets computed on every worker and appended to the files in target
//! order: the start line the worker loops meet at, the state they share,
//! and the loop itself.

use super::files::Written;
use super::slice::{slice, Slice};
use crate::backtest::CellOutput;
use crate::error::{Error, Result};
use crate::report;
use crate::spec::Experiment;
use std::collections::BTreeMap;

/// How far the workers have got.
struct WorkState {
    /// Computed slices waiting for the targets before them.
    pending: BTreeMap<usize, Slice>,
    /// A worker is appending slices: the others leave theirs in `pending`.
    appending: bool,
    /// The lowest target whose computation failed, with its error.
    failed: Option<(usize, Error)>,
    /// Appending to the files failed, with the error.
    write_failed: Option<Error>,
    /// Stop handing out work (appending failed, or a thread panicked).
    stop: bool,
}

/// A barrier for the worker loops that waits by spinning, then yielding,
/// and only then sleeping: the loops arrive within microseconds of each
/// other, and a thread put to sleep took 1-4 ms to wake on the test machine
/// (its core idles in the meantime). With more threads than cores the late
/// ones need the cores the early ones spin on, hence the bounded spin.
struct StartLine {
    arrived: std::sync::atomic::AtomicUsize,
    all: usize,
    asleep: std::sync::Mutex<()>,
    woken: std::sync::Condvar,
}

impl StartLine {
    fn new(all: usize) -> StartLine {
        StartLine {
            arrived: std::sync::atomic::AtomicUsize::new(0),
            all,
            asleep: std::sync::Mutex::new(()),
            woken: std::sync::Condvar::new(),
        }
    }

    fn wait(&self) {
        use std::sync::atomic::Ordering;
        let here = || self.arrived.load(Ordering::Acquire) >= self.all;
        if self.arrived.fetch_add(1, Ordering::AcqRel) + 1 >= self.all {
            // The last one wakes any that went to sleep (they check under
            // the lock before sleeping, so none misses this).
            let _g = self.asleep.lock().unwrap_or_else(|e| e.into_inner());
            self.woken.notify_all();
            return;
        }
        for _ in 0..10_000 {
            if here() {
                return;
            }
            std::hint::spin_loop();
        }
        for _ in 0..100 {
            if here() {
                return;
            }
            std::thread::yield_now();
        }
        let mut g = self.asleep.lock().unwrap_or_else(|e| e.into_inner());
        while !here() {
            g = self.woken.wait(g).unwrap_or_else(|e| e.into_inner());
        }
    }
}

/// Stops the other threads of [`stream_in_order`] when the thread holding it
/// panics, so that none of them waits for a target that will never come
/// (the panic then reaches the caller when the threads are joined).
struct StopOnPanic<'a> {
    progress: &'a std::sync::Mutex<WorkState>,
    moved: &'a std::sync::Condvar,
    halted: &'a std::sync::atomic::AtomicBool,
}

impl Drop for StopOnPanic<'_> {
    fn drop(&mut self) {
        if std::thread::panicking() {
            self.progress.lock().unwrap_or_else(|e| e.into_inner()).stop = true;
            self.halted
                .store(true, std::sync::atomic::Ordering::Release);
            self.moved.notify_all();
        }
    }
}

/// Compute targets on every thread of `pool` and append them to the files
/// in target order as soon as each and all before it are ready. Targets are
/// handed out in order, one at a time; the worker that finishes the next
/// target to be written appends it itself, while its slice is still in its
/// core's cache, and then any later ones already waiting; a worker that
/// finishes out of turn leaves its slice waiting and goes on. A worker
/// waits before starting a target more than `window` targets ahead of the
/// files, which bounds the slices held in memory. When targets fail, the
/// error of the lowest failing one is returned (the targets below it are
/// still computed, so the choice does not depend on timing).
///
/// One worker loop runs on each pool thread, and none begins a target until
/// all have started: a pool thread waiting inside a join picks up queued
/// work, and a worker loop started there would wait for the files to move
/// on while the target beneath it, which they need, could not finish. Once
/// every loop runs, only a target's own small jobs are left to pick up.
/// It stays one function because the worker loop, the hand-over of finished
/// targets and the in-order writer share one lock and one condition: split,
/// the waits and wake-ups could no longer be read together.
pub(super) fn stream_in_order(
    progress_to: &dyn crate::progress::Progress,
    exp: &Experiment,
    parts: &report::PartContext,
    source: &(dyn Fn(usize) -> Result<Vec<CellOutput>> + Sync),
    w: Written,
    pool: &rayon::ThreadPool,
    window: usize,
) -> Result<Written> {
    use std::sync::atomic::{AtomicUsize, Ordering};
    use std::sync::{Condvar, Mutex};
    let n = exp.targets.len();
    let next = AtomicUsize::new(0);
    let progress = Mutex::new(WorkState {
        pending: BTreeMap::new(),
        appending: false,
        failed: None,
        write_failed: None,
        stop: false,
    });
    let moved = Condvar::new();
    let lock = || progress.lock().unwrap_or_else(|e| e.into_inner());
    // Targets appended so far (all below are written): changed only by the
    // appending worker, under the lock, so that waiters re-checking under
    // the lock see it; read without the lock where a stale value is safe.
    let written_so_far = AtomicUsize::new(0);
    // Whether anything failed or stopped, for a look without the lock.
    let halted = std::sync::atomic::AtomicBool::new(false);
    // Only the worker that set `appending` touches the files.
    let files = Mutex::new(w);
    let workers = pool.current_num_threads().max(1);
    let all_started = StartLine::new(workers);
    // Append the waiting slices that are next in turn, unless another
    // worker is at it (it will find them).
    let append_ready = || {
        let mut p = lock();
        if p.appending || p.stop {
            return;
        }
        p.appending = true;
        loop {
            let t = written_so_far.load(Ordering::Acquire);
            let Some(s) = p.pending.remove(&t) else {
                break;
            };
            drop(p);
            let appended = files
                .lock()
                .unwrap_or_else(|e| e.into_inner())
                .append(t, s, parts);
            p = lock();
            match appended {
                Ok(()) => {
                    written_so_far.store(t + 1, Ordering::Release);
                    moved.notify_all();
                }
                Err(e) => {
                    p.write_failed = Some(e);
                    p.stop = true;
                    halted.store(true, Ordering::Release);
                    p.pending.clear();
                    moved.notify_all();
                    break;
                }
            }
        }
        p.appending = false;
    };
    // One loop on each pool thread (and only one: the barrier below would
    // otherwise wait for a loop that never starts).
    pool.broadcast(|_| {
        let _guard = StopOnPanic {
            progress: &progress,
            moved: &moved,
            halted: &halted,
        };
        // A loop holds its thread here until every loop has one.
        all_started.wait();
        loop {
            let t = next.fetch_add(1, Ordering::Relaxed);
            if t >= n {
                return;
            }
            // Without a failure and within the window, no need for the
            // lock (two workers meeting there at the start cost a sleep).
            let clear = !halted.load(Ordering::Acquire)
                && t < written_so_far.load(Ordering::Acquire) + window;
            if !clear {
                let mut p = lock();
                loop {
                    // Past a failed target nothing more is needed.
                    if p.stop || p.failed.as_ref().is_some_and(|(f, _)| t > *f) {
                        return;
                    }
                    if t < written_so_far.load(Ordering::Acquire) + window {
                        break;
                    }
                    p = moved.wait(p).unwrap_or_else(|e| e.into_inner());
                }
            }
            match source(t).map(|o| slice(progress_to, exp, parts, t, o)) {
                Ok(s) => {
                    let mut p = lock();
                    if p.stop {
                        return;
                    }
                    p.pending.insert(t, s);
                    drop(p);
                    append_ready();
                }
                Err(e) => {
                    let mut p = lock();
                    if p.failed.as_ref().is_none_or(|(f, _)| t < *f) {
                        p.failed = Some((t, e));
                    }
                    halted.store(true, Ordering::Release);
                    moved.notify_all();
                    return;
                }
            }
        }
    });
    let mut p = lock();
    if let Some(e) = p.write_failed.take() {
        return Err(e);
    }
    if let Some((_, e)) = p.failed.take() {
        return Err(e);
    }
    let written = written_so_far.load(Ordering::Acquire);
    if written < n {
        return Err(Error::Internal(format!(
            "internal error: {written} of {n} targets were written"
        )));
    }
    drop(p);
    Ok(files.into_inner().unwrap_or_else(|e| e.into_inner()))
}

#[cfg(test)]
mod tests {
    use super::StartLine;
    use std::sync::atomic::{AtomicUsize, Ordering};
    use std::time::{Duration, Instant};

    /// Every thread leaves the start line only after all have arrived, with
    /// more threads than cores and with one that arrives late enough for
    /// the others to have gone to sleep (the last one must wake them).
    #[test]
    fn start_line_lets_all_go_together() {
        for (threads, late) in [(16, Duration::ZERO), (4, Duration::from_millis(200))] {
            let (done, finished) = std::sync::mpsc::channel();
            std::thread::spawn(move || {
                let line = StartLine::new(threads);
                let arrived = AtomicUsize::new(0);
                std::thread::scope(|s| {
                    for k in 0..threads {
                        let (line, arrived) = (&line, &arrived);
                        s.spawn(move || {
                            if k == 0 {
                                std::thread::sleep(late);
                            }
                            arrived.fetch_add(1, Ordering::SeqCst);
                            line.wait();
                            // Nobody passes before everybody has arrived.
                            assert_eq!(arrived.load(Ordering::SeqCst), threads);
                        });
                    }
                });
                let _ = done.send(());
            });
            let started = Instant::now();
            finished
                .recv_timeout(Duration::from_secs(30))
                .expect("the start line hung or a thread passed it early");
            assert!(started.elapsed() >= late);
        }
    }
}
