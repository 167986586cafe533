//! The resume cache: every finished cell is written to
//! `<results parent>/.outturn-cache/<key>.cell` as soon as it completes,
//! keyed by a SHA-256 of everything its output depends on (this build of
//! the code — `OUTTURN_BUILD_ID`, a hash of the sources made by build.rs,
//! since one version string spans many builds —, the data file's hash, the target's resolved span, the transform
//! and predictors, the candidate's family, the scheme, horizons, multi-step
//! rule and season length). Rerunning after an interruption, or after adding
//! candidates, recomputes only cells whose key is new. Entries carry their
//! key and a checksum of the body and are validated on read; anything that
//! does not validate is ignored and recomputed.

use super::{cellio, CellOutput};
use crate::digest::sha256_hex;
use crate::plan::outlook_window;
use crate::plan::Cell;
use crate::spec::Experiment;
use std::path::{Path, PathBuf};

/// This build of the code (see build.rs).
const BUILD: &str = env!("OUTTURN_BUILD_ID");

pub struct Cache {
    dir: PathBuf,
    /// Whether the cache folder existed before this run.
    existed: bool,
    /// Entries written by this run, so an invalid run can take them back.
    written: std::sync::Mutex<Vec<PathBuf>>,
}

impl Cache {
    /// The cache beside a results folder.
    pub fn beside(folder: &Path) -> Cache {
        let parent = folder
            .parent()
            .filter(|p| !p.as_os_str().is_empty())
            .unwrap_or(Path::new("."));
        let dir = parent.join(".outturn-cache");
        Cache {
            existed: dir.is_dir(),
            dir,
            written: std::sync::Mutex::new(Vec::new()),
        }
    }

    pub fn key(exp: &Experiment, cell: &Cell) -> String {
        Cache::key_of_build(BUILD, exp, cell)
    }

    /// The key of a cell computed by the build `build`.
    fn key_of_build(build: &str, exp: &Experiment, cell: &Cell) -> String {
        let target = &exp.targets[cell.target];
        let content = format!(
            "outturn {} build {build}\ndata {}\ntarget {} n={} first={} future={}\ntransform {:?} freq {:?}\npredictors {:?}\nfamily {:?}\nscheme {:?} t0={}\nhorizons {:?} multi_step {:?}\noutlook {} {:?}\n",
            env!("CARGO_PKG_VERSION"),
            exp.data_bytes_sha256,
            target.name,
            target.n,
            target.labels.first().map(String::as_str).unwrap_or(""),
            target.labels.len() - target.n,
            exp.transform,
            exp.frequency,
            exp.predictors.iter().map(|p| (&p.column, p.transform, p.release_lag, p.known_ahead)).collect::<Vec<_>>(),
            exp.candidates[cell.candidate].family,
            {
                let s = &exp.schemes[cell.scheme];
                (s.kind, &s.start, s.window, s.refit_every, s.origins_first)
            },
            target.first_origins[cell.scheme],
            exp.horizons,
            exp.multi_step,
            cell.scheme == 0,
            outlook_window(exp),
        );
        // Only under units: original, so that every other key stays.
        let content = match exp.units {
            crate::spec::Units::Original => format!(
                "{content}units original {:?} {:?} lag={}\n",
                exp.transform_of(cell.candidate),
                exp.back_transform,
                target.source.lag
            ),
            crate::spec::Units::Transformed => content,
        };
        sha256_hex(content.as_bytes())
    }

    fn path(&self, key: &str) -> PathBuf {
        self.dir.join(format!("{key}.cell"))
    }

    /// A validated cached output, if any.
    pub fn get(&self, key: &str) -> Option<CellOutput> {
        let text = std::fs::read_to_string(self.path(key)).ok()?;
        let (head, body) = text.split_once('\n')?;
        let mut parts = head.split(' ');
        if parts.next()? != "outturn-cell"
            || parts.next()? != key
            || parts.next()? != sha256_hex(body.as_bytes())
        {
            return None;
        }
        let mut cells = cellio::read_cells(body).ok()?;
        if cells.len() != 1 {
            return None;
        }
        cells.pop().map(|(_, out)| out)
    }

    /// Store a finished cell (best effort: a cache that cannot be written only costs time).
    pub fn put(&self, key: &str, id: &str, out: &CellOutput) {
        let mut body = String::new();
        cellio::write_cell(id, out, &mut body);
        let text = format!("outturn-cell {key} {}\n{body}", sha256_hex(body.as_bytes()));
        if std::fs::create_dir_all(&self.dir).is_err() {
            return;
        }
        let tmp = self.dir.join(format!(".{key}.{}.tmp", std::process::id()));
        if std::fs::write(&tmp, text).is_ok() {
            if std::fs::rename(&tmp, self.path(key)).is_ok() {
                if let Ok(mut w) = self.written.lock() {
                    w.push(self.path(key));
                }
            }
        } else {
            let _ = std::fs::remove_file(&tmp);
        }
    }

    /// Remove what this run wrote (an invalid experiment writes nothing, SPEC §1).
    pub fn take_back(&self) {
        if let Ok(mut w) = self.written.lock() {
            for p in w.drain(..) {
                let _ = std::fs::remove_file(p);
            }
        }
        if !self.existed {
            let _ = std::fs::remove_dir_all(&self.dir);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn another_build_of_the_code_has_other_keys() {
        // By construction: the build id is part of what the key hashes, so a
        // cell cached by a changed build is not found by this one and is
        // recomputed; the same build finds its own entries.
        let dir = std::env::temp_dir().join(format!("outturn-cache-key-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        std::fs::write(
            dir.join("d.csv"),
            "t,y\n1,1\n2,3\n3,2\n4,5\n5,4\n6,6\n7,5\n8,8\n",
        )
        .unwrap();
        std::fs::write(
            dir.join("e.yaml"),
            "version: 1\nexperiment: k\ndata: {file: d.csv, time: t, frequency: index}\ntarget: y\ncandidates: [{family: naive}]\nbacktest: {schemes: [expanding], horizons: [1]}\n",
        )
        .unwrap();
        let exp = crate::spec::load(&dir.join("e.yaml")).unwrap();
        let cell = &crate::plan::cells(&exp)[0];
        let here = Cache::key(&exp, cell);
        assert_eq!(here, Cache::key_of_build(BUILD, &exp, cell));
        assert_ne!(here, Cache::key_of_build("another build", &exp, cell));
        let cache = Cache::beside(&dir.join("res"));
        cache.put(&here, &cell.id, &CellOutput::default());
        assert!(cache.get(&here).is_some());
        assert!(cache
            .get(&Cache::key_of_build("another build", &exp, cell))
            .is_none());
        let _ = std::fs::remove_dir_all(&dir);
    }
}
