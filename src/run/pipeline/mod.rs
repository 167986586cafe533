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

mod files;
mod slice;
mod stream;

use super::RunContext;
use crate::backtest::CellOutput;
use crate::error::{Error, Result};
use crate::report;
use crate::results::manifest::{self, OutputFile};
use crate::results::{diagnostics, Grid, Rows, Tables};
use crate::score;
use crate::spec::Experiment;
use files::{write_file, Stream, Written};
use sha2::{Digest, Sha256};
use std::path::Path;

/// The tables a folder holds, in manifest order (the reports and manifest follow).
pub(super) const TABLES: [&str; 9] = [
    "forecasts.csv",
    "scores.csv",
    "tests.csv",
    "stability.csv",
    "diagnostics.csv",
    "series.csv",
    "experiment.yaml",
    "outlook.csv",
    "parameters.csv",
];

/// A stream for each table, created in `dir`.
fn open_streams(dir: &Path, durable: bool) -> Result<Vec<Stream>> {
    TABLES
        .iter()
        .map(|&name| {
            let file = std::fs::File::create(dir.join(name))
                .map_err(|e| Error::io(format!("cannot create {name}"), e))?;
            Ok(Stream {
                name,
                file: std::io::BufWriter::with_capacity(128 << 10, file),
                hash: Sha256::new(),
                bytes: 0,
                unstarted: 0,
                durable,
            })
        })
        .collect()
}

/// A table's name and its open file, to sync.
type OpenFile = (&'static str, std::fs::File);

/// The streams flushed: each table's manifest entry, and its open file.
fn close_streams(streams: Vec<Stream>) -> Result<(Vec<OutputFile>, Vec<OpenFile>)> {
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
    Ok((outputs, files))
}

/// What the tables leave for the reports and the manifest.
struct Assembled {
    grid: Grid,
    report_rows: Option<std::result::Result<Rows, String>>,
    report_parts: Vec<report::TargetPart>,
    experiment_text: String,
    cells: manifest::CellLog,
    outputs: Vec<OutputFile>,
    audit: Option<crate::run::audit::AuditOutcome>,
}

/// The reports, rendered from the tables' rows and the manifest's
/// deterministic part exactly as `outturn render` does from the folder,
/// then the manifest.
fn write_reports_and_manifest(
    exp: &Experiment,
    dir: &Path,
    ctx: &RunContext,
    a: Assembled,
) -> Result<()> {
    let Assembled {
        grid,
        report_rows,
        report_parts,
        experiment_text,
        mut cells,
        outputs,
        audit,
    } = a;
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
    let templates = ctx.templates;
    let templates_used = report::render::used_templates(templates, &exp.formats);
    // The manifest is built once: without its run section it is what the
    // report reads (outputs so far hold only the tables); the run section
    // and the reports' entries are added before it is written.
    let mut manifest = manifest::Manifest::of(exp, &mut cells, &templates_used, outputs, &facts)
        .map_err(|e| Error::io("cannot read the cell log back".to_string(), e))?;
    manifest.audit = audit.map(|a| a.record());
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
        report::render::reports_of(folder, Some(report_parts), &core, &exp.formats, templates)
            .map_err(Error::Report)?;
    for (name, bytes) in &rendered {
        manifest
            .outputs
            .push(write_file(dir, name, bytes, ctx.durable)?);
    }
    ctx.step("reports written");
    manifest
        .write(&dir.join("manifest.json"), ctx.durable)
        .map_err(|e| Error::io("cannot write manifest.json".to_string(), e))?;
    drop(manifest);
    drop(cells);
    ctx.step("manifest written");
    Ok(())
}

/// What `produce` wrote.
pub struct Produced {
    /// The cells that could not be estimated: (id, why).
    pub failed_cells: Vec<(String, String)>,
}

/// Write every file of a results folder into `dir`, each synced to disk when
/// this returns if `ctx.durable`. `source(t)` gives target t's cell outputs in plan order
/// (candidates × schemes; combinations empty).
///
/// Its length is the list of output files, written in a fixed order; each
/// table's own code lives in `results/`.
pub fn produce(
    exp: &Experiment,
    source: &(dyn Fn(usize) -> Result<Vec<CellOutput>> + Sync),
    dir: &Path,
    ctx: &RunContext,
    pool: &rayon::ThreadPool,
    window: usize,
) -> Result<Produced> {
    let streams = open_streams(dir, ctx.durable)?;
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
        cells: manifest::CellLog::create(dir)
            .map_err(|e| Error::io(format!("cannot create a cell log in {}", dir.display()), e))?,
        failed: 0,
        audit: None,
        summary: score::summary::Accumulator::new(exp),
    };
    if ctx.threads <= 1 {
        // One thread of work means one: compute and write in turn.
        w = pool.install(|| -> Result<Written> {
            for t in 0..exp.targets.len() {
                let s = slice::slice(ctx.progress, exp, &parts, t, source(t)?);
                w.append(t, s, &parts)?;
            }
            Ok(w)
        })?;
    } else {
        w = stream::stream_in_order(ctx.progress, exp, &parts, source, w, pool, window.max(1))?;
    }
    let Written {
        streams,
        report_rows,
        report_parts,
        experiment_text,
        cells,
        failed,
        audit,
        summary,
    } = w;
    ctx.step("tables streamed");
    // Each target's part as the final choice of detailed targets shows it.
    let report_parts = report_parts
        .into_iter()
        .enumerate()
        .map(|(t, p)| p.settle(parts.shown(t)))
        .collect();
    let failed_cells = cells.failed();
    debug_assert_eq!(failed, failed_cells.len());
    let (mut outputs, files) = close_streams(streams)?;
    // The summary across targets, with two or more of them.
    let mut report_rows = report_rows;
    if exp.targets.len() >= 2 {
        let rows = summary.finish();
        let bytes = crate::results::summary::write(exp, &rows);
        outputs.push(write_file(
            dir,
            crate::results::summary::FILE,
            &bytes,
            ctx.durable,
        )?);
        if let Some(Ok(r)) = report_rows.as_mut() {
            r.summary = rows;
        }
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
    write_reports_and_manifest(
        exp,
        dir,
        ctx,
        Assembled {
            grid,
            report_rows,
            report_parts,
            experiment_text,
            cells,
            outputs,
            audit,
        },
    )?;
    syncing
        .join()
        .map_err(|_| Error::Internal("syncing the tables stopped unexpectedly".into()))??;
    ctx.step("reports and manifest");
    Ok(Produced { failed_cells })
}
