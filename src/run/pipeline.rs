//! From cell outputs to a results folder, target by target (SPEC §5), with
//! memory bounded by a window of targets: each target's cells are run (or
//! taken from shards), combined, scored and tested, and its slice of every
//! table is formatted, on all workers at once; the slices are appended to
//! the files in experiment order, as soon as each is ready, by the worker
//! that finishes the one next in turn, and hashed (SHA-256) as they stream.
//! Only the
//! small tables and the rows the report draws (the first few targets in
//! full, the first forecast of each series for the rest) stay in memory.
//! A single run, a merge of shards and `verify` all produce folders here, so
//! they write the same bytes.

use super::RunContext;
use crate::backtest::{self, CellOutput};
use crate::error::{Error, Result};
use crate::plan;
use crate::report;
use crate::results::manifest::{self, OutputFile};
use crate::results::{self, diagnostics, forecasts, outlook, scores, series, stability};
use crate::results::{Grid, Rows, Tables};
use crate::score;
use crate::spec::Experiment;
use sha2::{Digest, Sha256};
use std::collections::BTreeMap;
use std::io::Write;
use std::path::Path;

/// Targets whose rows the report draws in full: the charted ones, when
/// there is an HTML report to chart them in.
fn report_targets(exp: &Experiment) -> usize {
    if exp.formats.contains(&crate::spec::ReportFormat::Html) {
        report::CHART_TARGETS
    } else {
        0
    }
}

/// The tables a folder holds, in manifest order (the reports and manifest follow).
const TABLES: [&str; 8] = [
    "forecasts.csv",
    "scores.csv",
    "tests.csv",
    "stability.csv",
    "diagnostics.csv",
    "series.csv",
    "experiment.yaml",
    "outlook.csv",
];

/// One target's slice of every table.
struct Slice {
    tables: [Vec<u8>; 8],
    /// The rows the report reads of this target, parsed from its slice of
    /// the tables exactly as `outturn render` parses a whole folder, and the
    /// target's part of the report built from them.
    report_rows: std::result::Result<(Rows, report::TargetPart), String>,
    cells: Vec<manifest::CellFacts>,
    failed: usize,
}

fn header(bytes: &[u8]) -> &[u8] {
    match bytes.iter().position(|b| *b == b'\n') {
        Some(i) => &bytes[..=i],
        None => bytes,
    }
}

/// Score, test and format one target. `outputs` are its cells in plan order
/// (candidates × schemes), combinations not yet formed.
fn slice(
    exp: &Experiment,
    parts: &report::PartContext,
    t: usize,
    mut outputs: Vec<CellOutput>,
) -> Slice {
    let sub = exp.for_target(t);
    let cells = plan::cells(&sub);
    backtest::combine(&sub, &cells, &mut outputs);
    let errors = score::cell_errors(&sub, &cells, &outputs);
    // The parts below are independent: a worker that has run out of targets
    // takes some of them over (rayon runs a join in place when none is idle).
    let charted = t < report_targets(exp);
    let forecasts_part = || {
        let tables = forecasts::write(&sub, &cells, &outputs);
        let keep = if charted {
            tables.clone()
        } else if t >= report::DETAIL_TARGETS {
            // Beyond the detailed targets the report shows only the verdict.
            header(&tables).to_vec()
        } else {
            // Beyond the charted targets the report reads the benchmark's
            // forecasts (spans and counts) and where every other series begins.
            forecasts::write(&sub, &cells, &report_firsts(exp, &cells, &outputs))
        };
        (tables, keep)
    };
    let stability_part = || {
        let (stability, fluctuation) = score::stability::rolling(&sub, &errors);
        let bytes = stability::write(&sub, &stability);
        let keep = if charted { bytes.clone() } else { Vec::new() };
        (bytes, keep, fluctuation)
    };
    let scores_part = || {
        let scores = score::scores(&sub, &errors);
        let tests = score::comparison::run(&sub, &errors);
        (scores::write(&sub, &scores), tests)
    };
    let rest_part = || {
        let diagnostics = score::stability::diagnostics(&sub, &cells, &outputs, t == 0);
        let series = series::write(&sub, t == 0);
        let keep = if t < report::DETAIL_TARGETS {
            series.clone()
        } else {
            header(&series).to_vec()
        };
        (
            diagnostics::write(&diagnostics),
            series,
            keep,
            outlook::write(&sub, &cells, &outputs),
        )
    };
    let (
        ((forecasts_bytes, report_forecasts), (stability_bytes, report_stability, fluctuation)),
        ((scores_bytes, mut tests), (diagnostics_bytes, series, report_series, outlook_bytes)),
    ) = rayon::join(
        || rayon::join(forecasts_part, stability_part),
        || rayon::join(scores_part, rest_part),
    );
    tests.extend(fluctuation);
    tests.sort_by_key(|r| (r.target, r.scheme, r.horizon));
    let cells_facts = cells
        .iter()
        .zip(&outputs)
        .map(|(c, o)| manifest::CellFacts {
            id: c.id.clone(),
            failure: o.failure.clone(),
            fallbacks: o.fallbacks,
            seconds: o.seconds,
            cached: o.cached,
        })
        .collect();
    let tables = [
        forecasts_bytes,
        scores_bytes,
        results::tests::write(&sub, &tests),
        stability_bytes,
        diagnostics_bytes,
        series,
        if t == 0 {
            exp.source_text.clone().into_bytes()
        } else {
            Vec::new()
        },
        outlook_bytes,
    ];
    // The report reads every small table whole; of the large ones only the
    // rows it draws (none of stability.csv beyond the charted targets: that
    // table is left out).
    let report_tables: Tables = TABLES
        .iter()
        .zip(&tables)
        .map(|(&name, table)| {
            let keep: &[u8] = match name {
                "forecasts.csv" => &report_forecasts,
                "stability.csv" => &report_stability,
                "series.csv" => &report_series,
                _ => table,
            };
            (name, keep)
        })
        .filter(|(_, keep)| !keep.is_empty())
        .collect();
    let draw = exp.formats.contains(&crate::spec::ReportFormat::Html);
    let report_rows = Rows::read(&report_tables, parts.grid())
        .map_err(|e| e.to_string())
        .and_then(|rows| parts.part(t, rows, draw))
        .map(|(part, rows)| (rows, part));
    Slice {
        tables,
        report_rows,
        cells: cells_facts,
        failed: outputs.iter().filter(|o| o.failure.is_some()).count(),
    }
}

/// Of each cell, the first forecast per horizon; of the benchmark, all.
fn report_firsts(
    exp: &Experiment,
    cells: &[plan::Cell],
    outputs: &[CellOutput],
) -> Vec<CellOutput> {
    outputs
        .iter()
        .zip(cells)
        .map(|(o, cell)| {
            if cell.candidate == exp.benchmark {
                return CellOutput {
                    forecasts: o.forecasts.clone(),
                    ..Default::default()
                };
            }
            let mut seen = Vec::new();
            let forecasts = o
                .forecasts
                .iter()
                .filter(|r| {
                    let new = !seen.contains(&r.horizon);
                    seen.push(r.horizon);
                    new
                })
                .copied()
                .collect();
            CellOutput {
                forecasts,
                ..Default::default()
            }
        })
        .collect()
}

/// A file written as it streams, hashed on the way.
struct Stream {
    name: &'static str,
    file: std::io::BufWriter<std::fs::File>,
    hash: Sha256,
    bytes: usize,
    /// Bytes written since the disk was last asked to start writing.
    unstarted: usize,
    /// Whether the file must reach the disk (see `RunContext::durable`).
    durable: bool,
}

/// Every this many bytes of a table, the disk is asked to start writing
/// what it holds, so that the sync before the swap finds little left to do.
const START_WRITEBACK: usize = 1 << 20;

impl Stream {
    fn write(&mut self, data: &[u8]) -> Result<()> {
        self.hash.update(data);
        self.bytes += data.len();
        self.file
            .write_all(data)
            .map_err(|e| Error::io(format!("cannot write {}", self.name), e))?;
        self.unstarted += data.len();
        if self.durable && self.unstarted >= START_WRITEBACK {
            self.unstarted = 0;
            start_writeback(self.file.get_ref());
        }
        Ok(())
    }
}

/// Ask the kernel to start writing a file's dirty pages to disk without
/// waiting for them (a hint: the sync before the swap is what counts).
#[cfg(target_os = "linux")]
fn start_writeback(file: &std::fs::File) {
    use std::os::fd::AsRawFd;
    // SAFETY: the descriptor is open for the life of `file`; offset 0 and
    // length 0 cover the whole file, and SYNC_FILE_RANGE_WRITE only starts
    // the write-out of pages already handed to the kernel.
    unsafe {
        libc::sync_file_range(file.as_raw_fd(), 0, 0, libc::SYNC_FILE_RANGE_WRITE);
    }
}

#[cfg(not(target_os = "linux"))]
fn start_writeback(_file: &std::fs::File) {}

/// Write a whole file, and sync it when it must reach the disk.
fn write_file(dir: &Path, name: &str, bytes: &[u8], durable: bool) -> Result<OutputFile> {
    let mut file = std::fs::File::create(dir.join(name))
        .map_err(|e| Error::io(format!("cannot create {name}"), e))?;
    file.write_all(bytes)
        .and_then(|_| if durable { file.sync_all() } else { Ok(()) })
        .map_err(|e| Error::io(format!("cannot write {name}"), e))?;
    Ok(OutputFile::of(name, bytes))
}

/// The streams and what the report keeps, filled as slices are appended.
struct Written {
    streams: Vec<Stream>,
    /// The report's rows of the targets appended so far.
    report_rows: Option<std::result::Result<Rows, String>>,
    /// The report's parts of the targets appended so far.
    report_parts: Vec<report::TargetPart>,
    experiment_text: String,
    cell_facts: Vec<manifest::CellFacts>,
    failed: usize,
}

impl Written {
    fn append(&mut self, first: bool, s: Slice) -> Result<()> {
        for (k, table) in s.tables.iter().enumerate() {
            let name = TABLES[k];
            let body: &[u8] = if first || name == "experiment.yaml" {
                table
            } else {
                &table[header(table).len()..]
            };
            self.streams[k].write(body)?;
            if name == "experiment.yaml" {
                self.experiment_text
                    .push_str(&String::from_utf8_lossy(table));
            }
        }
        let next = s.report_rows.map(|(rows, part)| {
            self.report_parts.push(part);
            rows
        });
        self.report_rows = Some(match (self.report_rows.take(), next) {
            (None, next) => next,
            (Some(Ok(mut rows)), Ok(next)) => {
                rows.append(next);
                Ok(rows)
            }
            (Some(Err(e)), _) | (_, Err(e)) => Err(e),
        });
        self.failed += s.failed;
        self.cell_facts.extend(s.cells);
        Ok(())
    }
}

/// How far the workers have got.
struct Progress {
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
    progress: &'a std::sync::Mutex<Progress>,
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
fn stream_in_order(
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
    let progress = Mutex::new(Progress {
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
                .append(t == 0, s);
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
            match source(t).map(|o| slice(exp, parts, t, o)) {
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

/// What `produce` wrote.
pub struct Produced {
    pub failed_cells: usize,
}

/// Write every file of a results folder into `dir`, each synced to disk when
/// this returns if `ctx.durable`. `source(t)` gives target t's cell outputs in plan order
/// (candidates × schemes; combinations empty).
pub fn produce(
    exp: &Experiment,
    source: &(dyn Fn(usize) -> Result<Vec<CellOutput>> + Sync),
    dir: &Path,
    ctx: &RunContext,
    pool: &rayon::ThreadPool,
    window: usize,
) -> Result<Produced> {
    let mut streams: Vec<Stream> = Vec::new();
    for name in TABLES {
        let file = std::fs::File::create(dir.join(name))
            .map_err(|e| Error::io(format!("cannot create {name}"), e))?;
        streams.push(Stream {
            name,
            file: std::io::BufWriter::with_capacity(128 << 10, file),
            hash: Sha256::new(),
            bytes: 0,
            unstarted: 0,
            durable: ctx.durable,
        });
    }
    ctx.step("experiment loaded, tables start");
    let grid = Grid::of(exp);
    let first = exp.for_target(0);
    let parts = report::PartContext::new(
        grid.clone(),
        &exp.declared,
        Box::new(move || diagnostics::write(&score::stability::predictor_diagnostics(&first))),
    );
    let mut w = Written {
        streams,
        report_rows: None,
        report_parts: Vec::new(),
        experiment_text: String::new(),
        cell_facts: Vec::new(),
        failed: 0,
    };
    if ctx.threads <= 1 {
        // One thread of work means one: compute and write in turn.
        w = pool.install(|| -> Result<Written> {
            for t in 0..exp.targets.len() {
                let s = slice(exp, &parts, t, source(t)?);
                w.append(t == 0, s)?;
            }
            Ok(w)
        })?;
    } else {
        w = stream_in_order(exp, &parts, source, w, pool, window.max(1))?;
    }
    let Written {
        streams,
        report_rows,
        report_parts,
        experiment_text,
        cell_facts,
        failed,
    } = w;
    ctx.step("tables streamed");
    let mut outputs = Vec::new();
    let mut files = Vec::new();
    for s in streams {
        let Stream {
            name,
            file,
            hash,
            bytes,
            ..
        } = s;
        let file = file
            .into_inner()
            .map_err(|e| Error::io(format!("cannot write {name}"), e.into_error()))?;
        files.push((name, file));
        outputs.push(OutputFile {
            file: name.to_string(),
            sha256: crate::digest::hex(hash.finalize()),
            bytes,
        });
    }
    // The large tables reach the disk while the reports are rendered.
    let durable = ctx.durable;
    let syncing = std::thread::spawn(move || -> Result<()> {
        for (name, f) in files.into_iter().filter(|_| durable) {
            f.sync_all()
                .map_err(|e| Error::io(format!("cannot write {name}"), e))?;
        }
        Ok(())
    });
    let facts = manifest::RunFacts {
        seconds: ctx.started.elapsed().as_secs_f64(),
        threads: ctx.threads,
        host: super::host(),
        started_unix: ctx.started_unix,
        shard: ctx.shard.clone(),
        experiment_path: super::absolute(&exp.source_path),
    };
    // Reports: rendered from the tables and the manifest's deterministic
    // part, exactly as `outturn render` does from the folder.
    let templates = report::render::default_templates();
    let templates_used = report::render::used_templates(&templates, &exp.formats);
    // The manifest is built once: without its run section it is what the
    // report reads (outputs so far hold only the tables); the run section
    // and the reports' entries are added before it is written.
    let mut manifest = manifest::Manifest::of(exp, &cell_facts, &templates_used, outputs, &facts);
    let core = manifest.core_value();
    let rows = match report_rows {
        Some(rows) => rows.map_err(Error::Report)?,
        None => Rows::read(&Tables::new(), &grid).map_err(|e| Error::Report(e.to_string()))?,
    };
    ctx.step("rows ready");
    let folder = report::Folder::assemble(grid, rows, &exp.declared, experiment_text, &core);
    // On this thread: handing the work to a pool thread that has gone to
    // sleep costs the time it takes to wake (milliseconds on a virtual machine).
    let rendered =
        report::render::reports_of(folder, Some(report_parts), &core, &exp.formats, &templates)
            .map_err(Error::Report)?;
    for (name, bytes) in &rendered {
        manifest
            .outputs
            .push(write_file(dir, name, bytes, ctx.durable)?);
    }
    ctx.step("reports written");
    write_file(dir, "manifest.json", &manifest.to_bytes(), ctx.durable)?;
    ctx.step("manifest written");
    syncing
        .join()
        .map_err(|_| Error::Internal("syncing the tables stopped unexpectedly".into()))??;
    ctx.step("reports and manifest");
    Ok(Produced {
        failed_cells: failed,
    })
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
