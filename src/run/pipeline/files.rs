//! The files of a results folder as they are written: tables appended
//! slice by slice and hashed on the way, with writeback started early, and
//! whole files synced when they must reach the disk.

use super::slice::{header, Slice};
use super::TABLES;
use crate::error::{Error, Result};
use crate::report;
use crate::results::manifest::{self, OutputFile};
use crate::results::Rows;
use sha2::{Digest, Sha256};
use std::io::Write;
use std::path::Path;

/// A file written as it streams, hashed on the way.
pub(super) struct Stream {
    pub name: &'static str,
    pub file: std::io::BufWriter<std::fs::File>,
    pub hash: Sha256,
    pub bytes: usize,
    /// Bytes written since the disk was last asked to start writing.
    pub unstarted: usize,
    /// Whether the file must reach the disk (see `RunContext::durable`).
    pub durable: bool,
}

/// Every this many bytes of a table, the disk is asked to start writing
/// what it holds, so that the sync before the swap finds little left to do.
const START_WRITEBACK: usize = 1 << 20;

impl Stream {
    pub(super) fn write(&mut self, data: &[u8]) -> Result<()> {
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
pub(super) fn write_file(
    dir: &Path,
    name: &str,
    bytes: &[u8],
    durable: bool,
) -> Result<OutputFile> {
    let mut file = std::fs::File::create(dir.join(name))
        .map_err(|e| Error::io(format!("cannot create {name}"), e))?;
    file.write_all(bytes)
        .and_then(|_| if durable { file.sync_all() } else { Ok(()) })
        .map_err(|e| Error::io(format!("cannot write {name}"), e))?;
    Ok(OutputFile::of(name, bytes))
}

/// The streams and what the report keeps, filled as slices are appended.
pub(super) struct Written {
    pub streams: Vec<Stream>,
    /// The report's rows of the targets appended so far.
    pub report_rows: Option<std::result::Result<Rows, String>>,
    /// The report's parts of the targets appended so far.
    pub report_parts: Vec<report::TargetPart>,
    pub experiment_text: String,
    /// The cells appended so far, logged beside the tables.
    pub cells: manifest::CellLog,
    pub failed: usize,
    /// The look-ahead audit of the targets appended so far, when asked for.
    pub audit: Option<crate::run::audit::AuditOutcome>,
    /// The summary across the targets appended so far.
    pub summary: crate::score::summary::Accumulator,
}

impl Written {
    /// Append target `t`'s slice (targets in order), admitting it to the
    /// report's choice of detailed targets (`parts`).
    pub(super) fn append(&mut self, t: usize, s: Slice, parts: &report::PartContext) -> Result<()> {
        let first = t == 0;
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
        let key = s.key.map_err(Error::Report)?;
        let admitted = parts.admit(key);
        let next = s.report_rows.and_then(|(rows, part)| {
            if !part.can_show(admitted.shown) {
                return Err(format!(
                    "target {t} was chosen for the report's detail but not prepared for it"
                ));
            }
            self.report_parts.push(part);
            // A target without detail is in the report through its part
            // alone: its rows are let go (memory stays that of the
            // detailed targets, however many there are).
            Ok(if admitted.shown.detail {
                rows
            } else {
                rows.without_target_rows()
            })
        });
        // A target that lost its detail or its charts to this one lets go
        // of what it no longer shows (its rows too when it lost its detail).
        if let (Some(l), Some(Ok(rows))) = (admitted.dropped, self.report_rows.as_mut()) {
            rows.forget(l, parts.grid());
        }
        for (lost, shown) in [
            (admitted.dropped, report::Shown::default()),
            (
                admitted.uncharted,
                report::Shown {
                    detail: true,
                    charts: false,
                },
            ),
        ] {
            if let Some(p) = lost.and_then(|l| self.report_parts.get_mut(l)) {
                let part = std::mem::replace(p, report::TargetPart::empty());
                *p = part.settle(shown);
            }
        }
        self.report_rows = Some(match (self.report_rows.take(), next) {
            (None, next) => next,
            (Some(Ok(mut rows)), Ok(next)) => {
                rows.append(next);
                Ok(rows)
            }
            (Some(Err(e)), _) | (_, Err(e)) => Err(e),
        });
        self.failed += s.failed;
        self.summary.add(&s.summary);
        for cell in s.cells {
            self.cells
                .add(cell)
                .map_err(|e| Error::io("cannot write the cell log".to_string(), e))?;
        }
        if let Some(audit) = s.audit {
            match self.audit.as_mut() {
                Some(total) => total.add(audit),
                None => self.audit = Some(audit),
            }
        }
        Ok(())
    }
}
