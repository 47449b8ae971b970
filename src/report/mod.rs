//! Outputs: one module per file of the output folder, each a writer over finished results.
//! Nothing here computes a statistic; everything here can be rebuilt from an `Analysis`.

pub mod data;
pub mod html;
pub mod manifest;
pub mod methods;
pub mod outdir;
pub mod page;
pub mod plan;
pub mod plots;
pub mod synchrony;
pub mod tables;
pub mod verify;

use std::path::{Path, PathBuf};

use anyhow::Context;

use crate::pipeline::Analysis;
use plan::PlanAudit;

/// The audit of an analysis' pair plan.
pub fn audit(a: &Analysis) -> PlanAudit {
    PlanAudit::new(&a.study, &a.plan, &a.counts, &a.null)
}

/// Writes every result file into `dir`, returning their paths (manifest and timings excluded).
pub fn write_outputs(
    a: &Analysis,
    audit: &PlanAudit,
    warnings: &[String],
    dir: &Path,
) -> anyhow::Result<Vec<PathBuf>> {
    let file = |name: &str| dir.join(name);
    let mut written = Vec::new();
    let mut done = |p: PathBuf| written.push(p);
    tables::results(&a.inference.results, &file("results.tsv"))?;
    done(file("results.tsv"));
    tables::contrasts(&a.inference.contrasts, &file("contrasts.tsv"))?;
    done(file("contrasts.tsv"));
    tables::dyads(&a.inference.dyads, &file("dyads.tsv"))?;
    done(file("dyads.tsv"));
    tables::pairs(&a.study, &a.plan, &file("pairs.tsv"))?;
    done(file("pairs.tsv"));
    write_json(audit, &file("plan.json"))?;
    done(file("plan.json"));
    synchrony::write(&a.study, &a.synchrony, &file("synchrony.parquet"))?;
    done(file("synchrony.parquet"));
    let page = html::render(&page::report_data(a, audit, warnings));
    std::fs::write(file("report.html"), page)
        .with_context(|| format!("writing {}", file("report.html").display()))?;
    done(file("report.html"));
    Ok(written)
}

/// Pretty JSON with a final newline.
pub fn write_json<T: serde::Serialize>(value: &T, path: &Path) -> anyhow::Result<()> {
    let mut text = serde_json::to_string_pretty(value)?;
    text.push('\n');
    std::fs::write(path, text).with_context(|| format!("writing {}", path.display()))
}
