//! The cells of a manifest without holding them: a run logs each cell as
//! it finishes (one line in a file beside the tables) and keeps only their
//! count and the cells of note; the manifest streams them from the log when
//! written; a reader counts them and keeps the cells of note. A grid of a
//! hundred thousand targets has millions of cells.

use super::manifest::{CellFacts, CellRecord, CellSeconds};
use serde::de::{IgnoredAny, SeqAccess, Visitor};
use serde::{Deserialize, Deserializer, Serialize, Serializer};
use std::cell::RefCell;
use std::io::{BufRead, Write};
use std::path::{Path, PathBuf};

/// The cells a reader needs: how many, and those of note (failed, or
/// keeping an earlier estimate after a failed re-estimation), in order.
#[derive(Debug, Clone, Default, PartialEq)]
pub(crate) struct CellDigest {
    pub count: usize,
    pub notable: Vec<CellRecord>,
}

impl CellDigest {
    fn add(&mut self, cell: CellRecord) {
        self.count += 1;
        if cell.failure.is_some() || cell.fallbacks.is_some() {
            self.notable.push(cell);
        }
    }
}

/// What the report reads of a manifest's cells.
pub(crate) trait CellSummary {
    fn count(&self) -> usize;
    fn notable(&self) -> Vec<CellRecord>;
}

impl CellSummary for CellDigest {
    fn count(&self) -> usize {
        self.count
    }
    fn notable(&self) -> Vec<CellRecord> {
        self.notable.clone()
    }
}

impl CellSummary for Vec<CellRecord> {
    fn count(&self) -> usize {
        self.len()
    }
    fn notable(&self) -> Vec<CellRecord> {
        let mut digest = CellDigest::default();
        self.iter().cloned().for_each(|c| digest.add(c));
        digest.notable
    }
}

impl<'de> Deserialize<'de> for CellDigest {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct Cells;
        impl<'de> Visitor<'de> for Cells {
            type Value = CellDigest;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("a list of cells")
            }
            fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<CellDigest, A::Error> {
                let mut digest = CellDigest::default();
                while let Some(cell) = seq.next_element::<CellRecord>()? {
                    digest.add(cell);
                }
                Ok(digest)
            }
        }
        d.deserialize_seq(Cells)
    }
}

/// A list read for its length alone.
#[derive(Debug, Clone, Default, PartialEq)]
pub(crate) struct Counted(pub usize);

impl<'de> Deserialize<'de> for Counted {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct Items;
        impl<'de> Visitor<'de> for Items {
            type Value = Counted;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("a list")
            }
            fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<Counted, A::Error> {
                let mut n = 0;
                while seq.next_element::<IgnoredAny>()?.is_some() {
                    n += 1;
                }
                Ok(Counted(n))
            }
        }
        d.deserialize_seq(Items)
    }
}

type Items<T> = Box<dyn Iterator<Item = std::io::Result<T>>>;

/// A list written as it is read from the log (once), with the digest of
/// the cells it lists.
pub(crate) struct Streamed<T> {
    items: RefCell<Option<Items<T>>>,
    digest: CellDigest,
}

impl<T> Streamed<T> {
    pub(crate) fn new(items: Items<T>, digest: CellDigest) -> Self {
        Streamed {
            items: RefCell::new(Some(items)),
            digest,
        }
    }
}

impl<T: Serialize> Serialize for Streamed<T> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        use serde::ser::{Error, SerializeSeq};
        let items = self
            .items
            .borrow_mut()
            .take()
            .ok_or_else(|| S::Error::custom("the cell log was written out already"))?;
        // serde_json writes an unknown-length list as it writes a known one
        // (`[]` when empty), so the bytes are those of the list in memory.
        let mut seq = s.serialize_seq(None)?;
        for item in items {
            seq.serialize_element(&item.map_err(S::Error::custom)?)?;
        }
        seq.end()
    }
}

impl<T> CellSummary for Streamed<T> {
    fn count(&self) -> usize {
        self.digest.count
    }
    fn notable(&self) -> Vec<CellRecord> {
        self.digest.notable.clone()
    }
}

/// One line of the log.
#[derive(Serialize, Deserialize)]
struct Logged {
    record: CellRecord,
    seconds: f64,
}

/// A run's cells as they finish, in grid order: logged to a hidden file in
/// the folder being written (removed when the log is dropped, so it is
/// never among the folder's files) and summed up in memory.
pub(crate) struct CellLog {
    path: PathBuf,
    file: std::io::BufWriter<std::fs::File>,
    digest: CellDigest,
    cached: usize,
}

/// The log's file name in the folder being written.
const LOG: &str = ".cells.log";

impl CellLog {
    pub(crate) fn create(dir: &Path) -> std::io::Result<CellLog> {
        let path = dir.join(LOG);
        let file = std::io::BufWriter::new(std::fs::File::create(&path)?);
        Ok(CellLog {
            path,
            file,
            digest: CellDigest::default(),
            cached: 0,
        })
    }

    pub(crate) fn add(&mut self, cell: CellFacts) -> std::io::Result<()> {
        let record = cell.record();
        let line = Logged {
            record,
            seconds: cell.seconds,
        };
        serde_json::to_writer(&mut self.file, &line).map_err(std::io::Error::other)?;
        self.file.write_all(b"\n")?;
        self.cached += usize::from(cell.cached);
        self.digest.add(line.record);
        Ok(())
    }

    pub(crate) fn digest(&self) -> &CellDigest {
        &self.digest
    }

    /// How many cells came from the cache.
    pub(crate) fn cached(&self) -> usize {
        self.cached
    }

    /// The cells that failed: (id, why).
    pub(crate) fn failed(&self) -> Vec<(String, String)> {
        self.digest
            .notable
            .iter()
            .filter_map(|c| Some((c.id.clone(), c.failure.clone()?)))
            .collect()
    }

    /// The logged cells, read back from the start: their records and their
    /// seconds, each once.
    pub(crate) fn replay(&mut self) -> std::io::Result<(Items<CellRecord>, Items<CellSeconds>)> {
        self.file.flush()?;
        let records = self.read(|l| l.record)?;
        let seconds = self.read(|l| CellSeconds {
            id: l.record.id,
            seconds: l.seconds,
        })?;
        Ok((records, seconds))
    }

    fn read<T: 'static>(&self, f: fn(Logged) -> T) -> std::io::Result<Items<T>> {
        let lines = std::io::BufReader::new(std::fs::File::open(&self.path)?).lines();
        Ok(Box::new(lines.map(move |line| {
            let logged: Logged = serde_json::from_str(&line?).map_err(std::io::Error::other)?;
            Ok(f(logged))
        })))
    }
}

impl Drop for CellLog {
    fn drop(&mut self) {
        let _ = std::fs::remove_file(&self.path);
    }
}
