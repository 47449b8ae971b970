//! `nevermet demo`: write the synthetic study folder.

use std::process::ExitCode;

use crate::cli::{DemoArgs, ModeArg};
use crate::demo::{DemoMode, DemoOptions, write_demo};

pub fn demo(args: &DemoArgs) -> anyhow::Result<ExitCode> {
    let opts = DemoOptions {
        dyads: args.dyads,
        seed: args.seed,
        sampling_hz: args.sampling_hz,
        channels_per_roi: args.channels_per_roi,
        mode: match args.mode {
            ModeArg::Roles => DemoMode::Roles,
            ModeArg::Peers => DemoMode::Peers,
        },
        coupling: args.coupling,
    };
    let summary = write_demo(&opts, &args.out)?;
    println!(
        "wrote a synthetic study of {} dyads ({} members) to {}",
        summary.dyads,
        summary.members,
        args.out.display()
    );
    println!(
        "next: nevermet check {}",
        args.out.join("study.toml").display()
    );
    Ok(ExitCode::SUCCESS)
}
