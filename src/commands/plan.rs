//! `nevermet plan`: the pairing audit, and with `--out` the files `pairs.tsv` and `plan.json`.

use std::process::ExitCode;

use anyhow::Context;

use crate::cli::PlanArgs;
use crate::pipeline;
use crate::report::{self, plan::PlanAudit};
use crate::study;

pub fn plan(args: &PlanArgs) -> anyhow::Result<ExitCode> {
    let study = study::load(&args.study)?;
    let plan = match pipeline::build_plan(&study) {
        Ok(p) => p,
        Err(problems) => {
            crate::errln!("{} pairing problem(s):", problems.len());
            for p in &problems {
                crate::errln!("  - {p}");
            }
            return Ok(ExitCode::from(crate::EXIT_FAILURE));
        }
    };
    let counts = plan.counts();
    let null = pipeline::null_design(&study, &plan);
    let audit = PlanAudit::new(&study, &plan, &counts, &null);
    print!("{audit}");
    if let Some(w) = null.warning() {
        crate::errln!("warning: {w}");
    }
    if let Some(out) = &args.out {
        std::fs::create_dir_all(out).with_context(|| format!("creating {}", out.display()))?;
        report::tables::pairs(&study, &plan, &out.join("pairs.tsv"))?;
        report::write_json(&audit, &out.join("plan.json"))?;
        println!(
            "wrote {} and {}",
            out.join("pairs.tsv").display(),
            out.join("plan.json").display()
        );
    }
    Ok(ExitCode::SUCCESS)
}
