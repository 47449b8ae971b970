//! `nevermet demo`: write the synthetic study folder.

use std::process::ExitCode;

use crate::cli::{DemoArgs, ModeArg};
use crate::demo::{DemoMode, DemoOptions, write_demo};

pub fn demo(args: &DemoArgs) -> anyhow::Result<ExitCode> {
    let opts = options(args);
    let summary = write_demo(&opts, &args.out)?;
    crate::outln!(
        "wrote a synthetic study of {} dyads ({} members) to {}",
        summary.dyads,
        summary.members,
        args.out.display()
    );
    crate::outln!(
        "next: nevermet check {}",
        args.out.join("study.toml").display()
    );
    Ok(ExitCode::SUCCESS)
}

fn options(args: &DemoArgs) -> DemoOptions {
    DemoOptions {
        dyads: args.dyads,
        seed: args.seed,
        sampling_hz: args.sampling_hz,
        rois: args.rois,
        channels_per_roi: args.channels_per_roi,
        block_s: args.block_s,
        blocks_per_condition: args.blocks_per_condition,
        mode: match args.mode {
            ModeArg::Roles => DemoMode::Roles,
            ModeArg::Peers => DemoMode::Peers,
        },
        coupling: args.coupling,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::cli::{Cli, Command};
    use clap::Parser;

    fn parse(extra: &[&str]) -> DemoOptions {
        let mut argv = vec!["nevermet", "demo", "--out", "x"];
        argv.extend_from_slice(extra);
        let Command::Demo(args) = Cli::try_parse_from(argv).unwrap().command else {
            panic!("not demo")
        };
        options(&args)
    }

    #[test]
    fn the_command_line_defaults_are_the_library_defaults() {
        // The committed demo folder is what the command writes without options, and the
        // library's defaults are documented as that folder: the two must not drift apart.
        assert_eq!(parse(&[]), DemoOptions::default());
    }

    #[test]
    fn every_option_reaches_the_generator() {
        let opts = parse(&[
            "--dyads",
            "140",
            "--seed",
            "5",
            "--sampling-hz",
            "10",
            "--rois",
            "4",
            "--channels-per-roi",
            "4",
            "--block-s",
            "60",
            "--blocks-per-condition",
            "2",
            "--mode",
            "peers",
            "--coupling",
            "0",
        ]);
        let want = DemoOptions {
            dyads: 140,
            seed: 5,
            sampling_hz: 10.0,
            rois: 4,
            channels_per_roi: 4,
            block_s: 60.0,
            blocks_per_condition: 2,
            mode: DemoMode::Peers,
            coupling: 0.0,
        };
        assert_eq!(opts, want);
    }
}
