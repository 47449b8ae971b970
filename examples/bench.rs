//! Benchmark harness: prints the figures the speed and memory targets are judged by.
//!
//! `cargo run --release --example bench [-- --dyads N --threads T --draws K]`
//!
//! It writes a synthetic study, then times each stage separately: loading, planning, drawing
//! re-pairings, the synchrony engine (transforms and pairs), and inference at K and 10·K
//! re-pairings. Figures are printed, never asserted: machines differ.

use std::time::Instant;

use nevermet::demo::{DemoMode, DemoOptions, write_demo};
use nevermet::engine::Silent;
use nevermet::inference;
use nevermet::pairing;
use nevermet::pipeline;
use nevermet::study;

fn arg(name: &str, default: usize) -> usize {
    let args: Vec<String> = std::env::args().collect();
    args.iter()
        .position(|a| a == name)
        .and_then(|i| args.get(i + 1))
        .and_then(|v| v.parse().ok())
        .unwrap_or(default)
}

/// Peak resident memory of this process (Linux), in MiB.
fn peak_rss_mib() -> f64 {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("VmHWM:"))
                .and_then(|l| l.split_whitespace().nth(1)?.parse::<f64>().ok())
        })
        .map_or(f64::NAN, |kib| kib / 1024.0)
}

fn main() -> anyhow::Result<()> {
    let dyads = arg("--dyads", 12);
    let threads = arg("--threads", 0);
    let draws = arg("--draws", 10_000);
    if threads > 0 {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build_global()?;
    }
    let dir = tempfile::tempdir()?;
    let folder = dir.path().join("study");
    let t = Instant::now();
    write_demo(
        &DemoOptions {
            dyads,
            mode: DemoMode::Roles,
            ..DemoOptions::default()
        },
        &folder,
    )?;
    println!(
        "nevermet bench: {dyads} dyads, {} threads",
        rayon::current_num_threads()
    );
    println!(
        "  demo written          {:>9.3} s",
        t.elapsed().as_secs_f64()
    );

    let t = Instant::now();
    let st = study::load(&folder.join("study.toml"))?;
    println!(
        "  load + validate       {:>9.3} s",
        t.elapsed().as_secs_f64()
    );

    let t = Instant::now();
    let plan = pipeline::build_plan(&st).map_err(|p| anyhow::anyhow!(p.join("; ")))?;
    let reference = st.config.inference.reference;
    let null = pairing::NullDesign::new(&plan, reference, draws);
    let rc = &null.count;
    println!(
        "  plan + count          {:>9.3} s   ({} re-pairings in the reference set, {})",
        t.elapsed().as_secs_f64(),
        rc.exact_text
            .clone()
            .unwrap_or_else(|| format!("{:.3e}", rc.value)),
        rc.method
    );

    let t = Instant::now();
    let reps = null.draw(1)?;
    println!(
        "  {draws} re-pairings     {:>9.3} s   ({})",
        t.elapsed().as_secs_f64(),
        reps.method
    );

    let pairs = pipeline::engine_pairs(&plan);
    let t = Instant::now();
    let syn = pipeline::synchrony(&st, &plan, 4 << 30, &Silent)?;
    let secs = t.elapsed().as_secs_f64();
    let blocks = syn.blocks.len() * syn.chromophores.len() * syn.bands.len() * st.channels.len();
    let pair_blocks = blocks * pairs.len();
    let transforms = blocks * st.members.len();
    println!(
        "  synchrony             {:>9.3} s   ({} pairs, {pair_blocks} pair-blocks, {transforms} transforms; {:.1} µs per pair-block incl. transforms)",
        secs,
        pairs.len(),
        secs * 1e6 / pair_blocks as f64
    );

    let cells = pipeline::cells(&syn);
    let layout = pipeline::layout(&st, &plan, &null);
    let cfg = pipeline::inference_config(&st, 2);
    for k in [draws, draws * 10] {
        let reps = pairing::NullDesign::new(&plan, reference, k).draw(3)?;
        let d = inference::Draws {
            pairs: &reps.pairs,
            n_dyads: reps.n_dyads,
            exact: reps.exact,
        };
        let t = Instant::now();
        let out = inference::try_infer(&layout, &cells, &d, &cfg)?;
        println!(
            "  inference, {:>7} re-pairings {:>7.3} s   ({} cells, {} result rows)",
            reps.len(),
            t.elapsed().as_secs_f64(),
            cells.len(),
            out.results.len()
        );
    }
    println!("  peak resident memory  {:>9.1} MiB", peak_rss_mib());
    Ok(())
}
