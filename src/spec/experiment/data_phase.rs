//! The second phase of the top level: the data file read and the decoded
//! experiment resolved against it (periods to positions, each target's
//! columns and first origins).

use super::Decoded;
use crate::spec::decode::Ctx;
use crate::spec::limits;
use crate::spec::{data, resolve, Experiment};
use std::path::{Path, PathBuf};

/// Read the data and resolve the decoded experiment against it. The data
/// are checked even when the experiment file has problems of its own, so
/// that `check` lists both.
pub(in crate::spec) fn with_data(
    ctx: &mut Ctx,
    d: Decoded,
    path: &Path,
    text: &str,
    data_at: Option<&Path>,
) -> Option<Experiment> {
    let (
        Some((data_file, data_file_node)),
        Some((time_col, time_node)),
        Some(frequency),
        Some(transform),
    ) = (&d.data.file, &d.data.time, d.data.frequency, d.transform)
    else {
        return None;
    };
    let data_path: PathBuf = match data_at {
        Some(file) => file.to_path_buf(),
        None => path
            .parent()
            .map(Path::to_path_buf)
            .unwrap_or_default()
            .join(data_file),
    };
    if let Err(m) = crate::spec::regular_file(&data_path) {
        ctx.error(data_file_node, format!("the data file: {m}"));
        return None;
    }
    let bytes = match std::fs::read(&data_path) {
        Ok(b) => b,
        Err(e) => {
            ctx.error(
                data_file_node,
                format!("cannot read the data file {}: {e}", data_path.display()),
            );
            return None;
        }
    };
    let table = match data::read_table(&data_path, &bytes) {
        Ok(t) => t,
        Err(diag) => {
            ctx.diags.push(diag);
            return None;
        }
    };
    let vintage_spec = d.vintage_spec();
    let mut other_transforms: Vec<(super::super::Transform, String)> = Vec::new();
    for c in &d.candidates {
        if let Some(t) = c.transform.filter(|t| *t != transform) {
            if other_transforms.iter().all(|(o, _)| *o != t) {
                other_transforms.push((t, c.id.clone()));
            }
        }
    }
    let request = resolve::DataRequest {
        time: (time_col, time_node),
        frequency,
        start: d.data.start.as_ref().map(|(s, n)| (s.as_str(), n)),
        end: d.data.end.as_ref().map(|(s, n)| (s.as_str(), n)),
        targets: &d.targets,
        transform,
        predictors: &d.predictors.list,
        predictor_nodes: &d.predictors.nodes,
        schemes: &d
            .schemes
            .iter()
            .map(|p| (&p.scheme, &p.node))
            .collect::<Vec<_>>(),
        horizons: &d.horizons,
        positive_for: d
            .candidates
            .iter()
            .find(|c| c.family.multiplicative_error())
            .map(|c| (c.id.as_str(), c.transform.unwrap_or(transform))),
        other_transforms: &other_transforms,
    };
    let resolved = match &vintage_spec {
        Some(spec) => resolve::resolve_vintages(ctx, &table, request, spec),
        None => resolve::resolve_data(ctx, &table, request),
    };
    let resolved = resolved.filter(|_| d.name.is_some())?;
    if !ctx.diags.is_empty() {
        return None;
    }
    limits::check_data_sizes(
        ctx,
        &d.candidates,
        &d.schemes
            .iter()
            .map(|p| (&p.scheme, &p.node))
            .collect::<Vec<_>>(),
        &resolved.targets,
    );
    if !ctx.diags.is_empty() {
        return None;
    }
    check_period_sets(ctx, &d, &resolved);
    let period_problems = !ctx.diags.is_empty();
    let declared = d.declaration(ctx, path, text)?;
    if period_problems {
        return None;
    }
    let mut targets = resolved.targets;
    for t in &mut targets {
        t.in_levels = declared.units == super::super::Units::Original;
    }
    Some(Experiment {
        declared,
        data_path,
        data_bytes_sha256: crate::digest::sha256_hex(&bytes),
        label_style: resolved.label_style,
        targets,
    })
}

/// A period set must hold some scored period: target periods after a
/// scheme's first origin.
fn check_period_sets(ctx: &mut Ctx, d: &Decoded, resolved: &resolve::Resolved) {
    for (set, node) in d.scoring.periods.iter().zip(&d.scoring.period_nodes) {
        let scored = resolved.targets.iter().any(|t| {
            let first = t.first_origins.iter().copied().min().unwrap_or(0);
            t.ordinals[first.min(t.n)..t.n]
                .iter()
                .any(|&o| o >= set.from_ordinal && o <= set.to_ordinal)
        });
        if !scored {
            let t = &resolved.targets[0];
            let first = t.first_origins.iter().copied().min().unwrap_or(0);
            let range = if first < t.n {
                format!("{} to {}", t.labels[first], t.labels[t.n - 1])
            } else {
                "none".to_string()
            };
            ctx.error(
                node,
                format!(
                    "scoring.periods.{}: {} to {} holds no forecast to score (the scored periods run from {range}); move it into that range or remove it",
                    set.name, set.from, set.to
                ),
            );
        }
    }
}
