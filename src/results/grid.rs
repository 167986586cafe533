//! The grid of an experiment as its tables name it: target, candidate and
//! scheme ids in experiment order, the horizons and the benchmark. The
//! readers turn the ids in a table into positions in these lists.

use super::text::{Ids, ReadError, Reader};
use serde_json::Value;

/// The ids of an experiment in experiment order.
#[derive(Clone, Debug, PartialEq)]
pub struct Grid {
    pub targets: Vec<String>,
    pub candidates: Vec<String>,
    pub schemes: Vec<String>,
    pub horizons: Vec<usize>,
    /// Index into `candidates`.
    pub benchmark: usize,
}

/// A grid's ids by name, for the readers.
pub struct Lookup<'a> {
    pub targets: Ids<'a>,
    pub candidates: Ids<'a>,
    pub schemes: Ids<'a>,
    pub horizons: &'a [usize],
}

fn str_list(v: Option<&Value>) -> Vec<String> {
    v.and_then(Value::as_array)
        .map(|a| {
            a.iter()
                .filter_map(|x| x.as_str().map(String::from))
                .collect()
        })
        .unwrap_or_default()
}

impl Grid {
    /// The grid of an experiment, as its manifest records it.
    pub fn of(exp: &crate::spec::Experiment) -> Grid {
        Grid {
            targets: exp.targets.iter().map(|t| t.name.clone()).collect(),
            candidates: exp.candidates.iter().map(|c| c.id.clone()).collect(),
            schemes: exp.schemes.iter().map(|s| s.id.clone()).collect(),
            horizons: exp.horizons.clone(),
            benchmark: exp.benchmark,
        }
    }

    pub fn lookup(&self) -> Lookup<'_> {
        Lookup {
            targets: Ids::new("target", &self.targets),
            candidates: Ids::new("candidate", &self.candidates),
            schemes: Ids::new("scheme", &self.schemes),
            horizons: &self.horizons,
        }
    }

    /// The grid a results folder's manifest records; what it lacks is taken
    /// from scores.csv in order of appearance (horizons ascending).
    pub fn read(manifest: &Value, scores: &[u8]) -> Result<Grid, ReadError> {
        let g = manifest.get("grid");
        let mut targets = str_list(g.and_then(|g| g.get("targets")));
        let mut candidates = str_list(g.and_then(|g| g.get("candidates")));
        let mut schemes = str_list(g.and_then(|g| g.get("schemes")));
        let mut horizons: Vec<usize> = g
            .and_then(|g| g.get("horizons"))
            .and_then(Value::as_array)
            .map(|a| {
                a.iter()
                    .filter_map(|h| h.as_u64().and_then(|h| usize::try_from(h).ok()))
                    .collect()
            })
            .unwrap_or_default();
        let from_manifest = !targets.is_empty() && !candidates.is_empty() && !schemes.is_empty();
        if !from_manifest || horizons.is_empty() {
            let seen = in_order_of_appearance(scores)?;
            if !from_manifest {
                // What the manifest lists stays first; the scores add the rest.
                for (list, more) in [
                    (&mut targets, seen.targets),
                    (&mut candidates, seen.candidates),
                    (&mut schemes, seen.schemes),
                ] {
                    for id in more {
                        if !list.contains(&id) {
                            list.push(id);
                        }
                    }
                }
                for h in &seen.horizons {
                    if !horizons.contains(h) {
                        horizons.push(*h);
                    }
                }
                horizons.sort_unstable();
            }
            if horizons.is_empty() {
                horizons = seen.horizons;
            }
        }
        if targets.is_empty() || candidates.is_empty() || schemes.is_empty() {
            return Err(ReadError::invalid(
                "scores.csv",
                None,
                "no target, candidate or scheme is named here or in manifest.json's grid",
            ));
        }
        let benchmark = g
            .and_then(|g| g.get("benchmark"))
            .and_then(Value::as_str)
            .and_then(|b| candidates.iter().position(|c| c == b))
            .or_else(|| candidates.iter().position(|c| c == "naive"))
            .unwrap_or(0);
        Ok(Grid {
            targets,
            candidates,
            schemes,
            horizons,
            benchmark,
        })
    }
}

/// The ids of scores.csv in order of appearance, its numeric horizons ascending.
fn in_order_of_appearance(scores: &[u8]) -> Result<Grid, ReadError> {
    let mut reader = Reader::new("scores.csv", scores)?;
    let [target, candidate, scheme, horizon] =
        reader.columns(["target", "candidate", "scheme", "horizon"])?;
    let mut seen = Grid {
        targets: Vec::new(),
        candidates: Vec::new(),
        schemes: Vec::new(),
        horizons: Vec::new(),
        benchmark: 0,
    };
    while let Some(row) = reader.next_row()? {
        for (list, col) in [
            (&mut seen.targets, target),
            (&mut seen.candidates, candidate),
            (&mut seen.schemes, scheme),
        ] {
            let v = row.text(col);
            if !list.iter().any(|x| x == v) {
                list.push(v.to_string());
            }
        }
        if let Ok(h) = row.text(horizon).parse::<usize>() {
            if !seen.horizons.contains(&h) {
                seen.horizons.push(h);
            }
        }
    }
    seen.horizons.sort_unstable();
    Ok(seen)
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    const SCORES: &[u8] = b"target,candidate,scheme,horizon,period_set,n,rmse,is_rmse\n\
        y,naive,fixed,3,all,4,1,\n\
        y,ar(1),fixed,1,all,4,1,\n\
        y,naive,fixed,all,all,8,1,\n";

    #[test]
    fn the_manifest_grid_comes_first_and_scores_fill_what_it_lacks() {
        // By construction: ids as listed in the manifest, else as they first
        // appear in the scores; horizons ascending; the benchmark by name,
        // else `naive`.
        let manifest = json!({"grid": {"targets": ["y"], "candidates": ["ar(1)", "naive"],
            "schemes": ["fixed"], "horizons": [1, 3], "benchmark": "naive"}});
        let g = Grid::read(&manifest, SCORES).unwrap();
        assert_eq!(g.candidates, ["ar(1)", "naive"]);
        assert_eq!(g.benchmark, 1);
        let g = Grid::read(&json!({}), SCORES).unwrap();
        assert_eq!(g.targets, ["y"]);
        assert_eq!(g.candidates, ["naive", "ar(1)"]);
        assert_eq!(g.horizons, [1, 3]);
        assert_eq!(g.benchmark, 0);
        // A grid without candidates has nothing to report on.
        let header = &SCORES[..SCORES.iter().position(|&b| b == b'\n').unwrap() + 1];
        let targets_only = json!({"grid": {"targets": ["y"]}});
        assert!(Grid::read(&targets_only, header).is_err());
    }
}
