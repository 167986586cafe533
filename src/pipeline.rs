//! From cell outputs to a results folder, target by target (SPEC §5), with
//! memory bounded by one chunk of targets: each target's cells are run (or
//! taken from shards), combined, scored and tested, and its slice of every
//! table is formatted in parallel; slices are then appended to the files in
//! experiment order while their SHA-256 is computed as they stream. Only the
//! small tables and the rows the report draws (the first few targets in
//! full, the first forecast of each series for the rest) stay in memory.
//! A single run, a merge of shards and `verify` all produce folders here, so
//! they write the same bytes.

use crate::backtest::{self, CellOutput};
use crate::error::{Error, Result};
use crate::plan;
use crate::report::{self, manifest::OutputFile};
use crate::score;
use crate::spec::Experiment;
use crate::RunContext;
use rayon::prelude::*;
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
    report_forecasts: Vec<u8>,
    report_stability: Vec<u8>,
    report_series: Vec<u8>,
    cells: Vec<report::manifest::CellFacts>,
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
fn slice(exp: &Experiment, t: usize, mut outputs: Vec<CellOutput>) -> Slice {
    let sub = exp.for_target(t);
    let cells = plan::cells(&sub);
    backtest::combine(&sub, &cells, &mut outputs);
    let errors = score::cell_errors(&sub, &cells, &outputs);
    let scores = score::scores(&sub, &errors);
    let mut tests = score::comparison::run(&sub, &errors);
    let (stability, fluctuation) = score::stability::rolling(&sub, &errors);
    tests.extend(fluctuation);
    tests.sort_by_key(|r| (r.target, r.scheme, r.horizon));
    let diagnostics = score::stability::diagnostics(&sub, &cells, &outputs, t == 0);
    let tables = report::tables::forecasts_csv(&sub, &cells, &outputs);
    let report_forecasts = if t < report_targets(exp) {
        tables.clone()
    } else if t >= report::DETAIL_TARGETS {
        // Beyond the detailed targets the report shows only the verdict.
        header(&tables).to_vec()
    } else {
        // Beyond the charted targets the report reads the benchmark's
        // forecasts (spans and counts) and where every other series begins.
        let firsts: Vec<CellOutput> = outputs
            .iter()
            .zip(&cells)
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
            .collect();
        report::tables::forecasts_csv(&sub, &cells, &firsts)
    };
    let stability_bytes = report::tables::stability_csv(&sub, &stability);
    let report_stability = if t < report_targets(exp) {
        stability_bytes.clone()
    } else {
        Vec::new()
    };
    let series = report::tables::series_csv(&sub, t == 0);
    let report_series = if t < report::DETAIL_TARGETS {
        series.clone()
    } else {
        header(&series).to_vec()
    };
    let cells_facts = cells
        .iter()
        .zip(&outputs)
        .map(|(c, o)| report::manifest::CellFacts {
            id: c.id.clone(),
            failure: o.failure.clone(),
            fallbacks: o.fallbacks,
            seconds: o.seconds,
            cached: o.cached,
        })
        .collect();
    Slice {
        tables: [
            tables,
            report::tables::scores_csv(&sub, &scores),
            report::tables::tests_csv(&sub, &tests),
            stability_bytes,
            report::tables::diagnostics_csv(&diagnostics),
            series,
            if t == 0 {
                exp.source_text.clone().into_bytes()
            } else {
                Vec::new()
            },
            report::tables::outlook_csv(&sub, &cells, &outputs),
        ],
        report_forecasts,
        report_stability,
        report_series,
        cells: cells_facts,
        failed: outputs.iter().filter(|o| o.failure.is_some()).count(),
    }
}

/// A file written as it streams, hashed on the way.
struct Stream {
    name: &'static str,
    file: std::io::BufWriter<std::fs::File>,
    hash: Sha256,
    bytes: usize,
}

impl Stream {
    fn write(&mut self, data: &[u8]) -> Result<()> {
        self.hash.update(data);
        self.bytes += data.len();
        self.file
            .write_all(data)
            .map_err(|e| Error::io(format!("cannot write {}", self.name), e))
    }
}

fn write_file(dir: &Path, name: &str, bytes: &[u8]) -> Result<OutputFile> {
    std::fs::write(dir.join(name), bytes)
        .map_err(|e| Error::io(format!("cannot write {name}"), e))?;
    Ok(OutputFile::of(name, bytes))
}

/// The streams and what the report keeps, filled by the writer thread.
struct Written {
    streams: Vec<Stream>,
    small: BTreeMap<String, Vec<u8>>,
    cell_facts: Vec<report::manifest::CellFacts>,
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
            // The report reads every small table whole; of the two large ones
            // only the rows it draws.
            let keep: &[u8] = match name {
                "forecasts.csv" => &s.report_forecasts,
                "stability.csv" => &s.report_stability,
                "series.csv" => &s.report_series,
                _ => table,
            };
            let entry = self.small.entry(name.to_string()).or_default();
            if entry.is_empty() || name == "experiment.yaml" {
                entry.extend_from_slice(keep);
            } else {
                entry.extend_from_slice(&keep[header(keep).len()..]);
            }
        }
        self.failed += s.failed;
        self.cell_facts.extend(s.cells);
        Ok(())
    }
}

/// What `produce` wrote.
pub struct Produced {
    pub failed_cells: usize,
}

/// Write every file of a results folder into `dir`. `source(t)` gives target
/// t's cell outputs in plan order (candidates × schemes; combinations empty).
pub fn produce(
    exp: &Experiment,
    source: &(dyn Fn(usize) -> Result<Vec<CellOutput>> + Sync),
    dir: &Path,
    ctx: &RunContext,
    chunk: usize,
) -> Result<Produced> {
    let mut streams: Vec<Stream> = Vec::new();
    for name in TABLES {
        let file = std::fs::File::create(dir.join(name))
            .map_err(|e| Error::io(format!("cannot create {name}"), e))?;
        streams.push(Stream {
            name,
            file: std::io::BufWriter::with_capacity(1 << 20, file),
            hash: Sha256::new(),
            bytes: 0,
        });
    }
    if std::env::var_os("OUTTURN_DEBUG_TIMING").is_some() {
        eprintln!(
            "timing: experiment loaded, tables start at {:.3} s",
            ctx.started.elapsed().as_secs_f64()
        );
    }
    let targets: Vec<usize> = (0..exp.targets.len()).collect();
    let mut w = Written {
        streams,
        small: BTreeMap::new(),
        cell_facts: Vec::new(),
        failed: 0,
    };
    let compute = |block: &[usize]| -> Result<Vec<Slice>> {
        block
            .par_iter()
            .map(|&t| source(t).map(|o| slice(exp, t, o)))
            .collect()
    };
    if ctx.threads <= 1 {
        // One thread of work means one: compute and write in turn.
        for block in targets.chunks(chunk.max(1)) {
            for (i, s) in compute(block)?.into_iter().enumerate() {
                w.append(block[0] + i == 0, s)?;
            }
        }
    } else {
        // A writer thread appends each chunk's slices (and hashes them) while
        // the workers compute the next chunk.
        let (tx, rx) = std::sync::mpsc::sync_channel::<(usize, Vec<Slice>)>(1);
        w = std::thread::scope(|scope| -> Result<Written> {
            let writer = scope.spawn(move || -> Result<Written> {
                for (first_target, slices) in rx {
                    for (i, s) in slices.into_iter().enumerate() {
                        w.append(first_target + i == 0, s)?;
                    }
                }
                Ok(w)
            });
            let mut failure = None;
            for block in targets.chunks(chunk.max(1)) {
                match compute(block) {
                    Ok(slices) => {
                        if tx.send((block[0], slices)).is_err() {
                            break;
                        }
                    }
                    Err(e) => {
                        failure = Some(e);
                        break;
                    }
                }
            }
            drop(tx);
            let written = writer
                .join()
                .map_err(|_| Error::Run("the table writer stopped unexpectedly".into()))?;
            match failure {
                Some(e) => Err(e),
                None => written,
            }
        })?;
    }
    let written = w;
    let Written {
        streams,
        small,
        cell_facts,
        failed,
    } = written;
    if std::env::var_os("OUTTURN_DEBUG_TIMING").is_some() {
        eprintln!(
            "timing: tables streamed at {:.2} s",
            ctx.started.elapsed().as_secs_f64()
        );
    }
    let mut outputs = Vec::new();
    let mut files = Vec::new();
    for s in streams {
        let Stream {
            name,
            file,
            hash,
            bytes,
        } = s;
        let file = file
            .into_inner()
            .map_err(|e| Error::io(format!("cannot write {name}"), e.into_error()))?;
        files.push(file);
        outputs.push(OutputFile {
            name: name.to_string(),
            sha256: hash.finalize().iter().map(|b| format!("{b:02x}")).collect(),
            bytes,
        });
    }
    // The large tables reach the disk while the reports are rendered.
    let syncing = std::thread::spawn(move || {
        for f in files {
            let _ = f.sync_all();
        }
    });
    let facts = report::manifest::RunFacts {
        seconds: ctx.started.elapsed().as_secs_f64(),
        threads: ctx.threads,
        host: crate::host(),
        started_unix: ctx.started_unix,
        shard: ctx.shard.clone(),
        experiment_path: crate::absolute(&exp.source_path),
    };
    // Reports: rendered from the tables and the manifest's deterministic
    // part, exactly as `outturn render` does from the folder.
    let templates = report::render::default_templates();
    let templates_used = report::render::used_templates(&templates, &exp.formats);
    let core = {
        let draft = report::manifest::manifest(exp, &cell_facts, &templates_used, &outputs, &facts);
        let value: serde_json::Value =
            serde_json::from_slice(&draft).map_err(|e| Error::Run(format!("manifest: {e}")))?;
        report::render::manifest_core(&value)
    };
    let rendered =
        report::render::reports(&small, &core, &exp.formats, &templates).map_err(Error::Run)?;
    for (name, bytes) in &rendered {
        outputs.push(write_file(dir, name, bytes)?);
    }
    let manifest = report::manifest::manifest(exp, &cell_facts, &templates_used, &outputs, &facts);
    write_file(dir, "manifest.json", &manifest)?;
    let _ = syncing.join();
    if std::env::var_os("OUTTURN_DEBUG_TIMING").is_some() {
        eprintln!(
            "timing: reports and manifest at {:.2} s",
            ctx.started.elapsed().as_secs_f64()
        );
    }
    Ok(Produced {
        failed_cells: failed,
    })
}
