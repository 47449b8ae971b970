//! Cohort benchmark: the whole `nevermet run` on large generated studies, timed from outside.
//!
//! ```sh
//! cargo run --release --example cohort                      # the four standard scenarios
//! cargo run --release --example cohort -- --dyads 140       # one scenario, e.g. to profile
//! cargo run --release --example cohort -- --dyads 35 --channel-pairs all --threads 2
//! cargo run --release --example cohort -- --micro           # one transform, one pair kernel
//! ```
//!
//! Options: `--dyads N` and `--channel-pairs same|all` pick a single scenario (default: 35, 70
//! and 140 dyads with `same`, then 35 with `all`); `--threads T` is passed to `run`;
//! `--draws K` sets the permutations (10 000); `--sampling-hz F` the recordings' rate (10; a
//! low rate makes a quick check of the harness itself); `--study-only` writes and measures the
//! studies without analysing them; `--micro` times the spectral kernels through the library
//! (alone, or before the scenario `--dyads` asks for); `--limit-min M` kills a run after M
//! minutes; `--no-build` skips making sure the `nevermet` binary is current.
//!
//! Every scenario is written by the `nevermet demo` command (4 regions × 4 channels, HbO and
//! HbR, joint / parallel / rest × 2 blocks of 60 s), its study file set to one 10–50 s band,
//! K permutations and the requested channel pairing, then analysed by `nevermet run` in a
//! child process whose wall time and peak resident memory are taken from the kernel when it
//! is reaped. The stage times come from the run's own `timings.json`, the pair-block count
//! from its `manifest.json`. Figures are printed, never asserted: machines differ. This file
//! owns only the measuring; it must not reach into the engine beyond the public spectral API
//! of the micro-benchmarks.

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use anyhow::{Context, bail, ensure};
use nevermet::spectral::coarse::{CoarsePlan, GROUP, MemberNodes};
use nevermet::spectral::coherence::CoherencePlan;
use nevermet::spectral::morlet::WaveletPlan;
use nevermet::spectral::{Complex64, band_scale_grid};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// The fixed design of every scenario.
const ROIS: usize = 4;
const CHANNELS_PER_ROI: usize = 4;
const BLOCK_S: f64 = 60.0;
const BLOCKS_PER_CONDITION: usize = 2;
const CONTEXT_S: f64 = 90.0;
const BAND: (f64, f64) = (10.0, 50.0);
const OMEGA0: f64 = 6.0;
const SCALES_PER_OCTAVE: usize = 12;
/// Each micro-benchmark repeats its call for at least this long.
const MICRO_MIN_S: f64 = 0.5;

/// The standard scenarios, in the order they run.
const STANDARD: [(usize, &str); 4] = [(35, "same"), (70, "same"), (140, "same"), (35, "all")];

struct Options {
    scenarios: Vec<(usize, String)>,
    threads: Option<usize>,
    draws: usize,
    sampling_hz: f64,
    study_only: bool,
    micro: bool,
    limit: Option<Duration>,
    build: bool,
}

fn options() -> anyhow::Result<Options> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let flag = |name: &str| args.iter().any(|a| a == name);
    let value = |name: &str| -> Option<&str> {
        let i = args.iter().position(|a| a == name)?;
        args.get(i + 1).map(String::as_str)
    };
    let number = |name: &str| -> anyhow::Result<Option<f64>> {
        value(name)
            .map(|v| {
                v.parse::<f64>()
                    .with_context(|| format!("{name} takes a number, got {v:?}"))
            })
            .transpose()
    };
    let count = |name: &str| -> anyhow::Result<Option<usize>> {
        value(name)
            .map(|v| {
                v.parse::<usize>()
                    .with_context(|| format!("{name} takes a whole number, got {v:?}"))
            })
            .transpose()
    };
    let known = [
        "--dyads",
        "--threads",
        "--draws",
        "--channel-pairs",
        "--sampling-hz",
        "--limit-min",
        "--study-only",
        "--micro",
        "--no-build",
    ];
    for a in args.iter().filter(|a| a.starts_with("--")) {
        ensure!(
            known.contains(&a.as_str()),
            "unknown option {a}; known: {}",
            known.join(" ")
        );
    }
    let dyads = count("--dyads")?;
    let pairs = value("--channel-pairs").map(str::to_string);
    if let Some(p) = &pairs {
        ensure!(
            p == "same" || p == "all",
            "--channel-pairs is same or all, got {p:?}"
        );
    }
    let micro = flag("--micro");
    let scenarios = match (dyads, pairs) {
        (None, None) if micro => Vec::new(),
        (None, None) => STANDARD.iter().map(|&(d, p)| (d, p.to_string())).collect(),
        (d, p) => vec![(d.unwrap_or(35), p.unwrap_or_else(|| "same".into()))],
    };
    let threads = count("--threads")?;
    if let Some(t) = threads {
        ensure!(t >= 1, "--threads must be at least 1");
    }
    Ok(Options {
        scenarios,
        threads,
        draws: count("--draws")?.unwrap_or(10_000),
        sampling_hz: number("--sampling-hz")?.unwrap_or(10.0),
        study_only: flag("--study-only"),
        micro,
        limit: number("--limit-min")?.map(|m| Duration::from_secs_f64(m * 60.0)),
        build: !flag("--no-build"),
    })
}

/// The `nevermet` binary next to this example: examples get no `CARGO_BIN_EXE_*` variable
/// (cargo sets those for integration tests and benchmarks only), so the path is taken from
/// the example's own location, `target/<profile>/examples/cohort`.
fn binary() -> anyhow::Result<PathBuf> {
    if let Some(path) = option_env!("CARGO_BIN_EXE_nevermet") {
        return Ok(PathBuf::from(path));
    }
    let exe = std::env::current_exe().context("locating the example executable")?;
    let profile_dir = exe
        .parent()
        .and_then(Path::parent)
        .with_context(|| format!("{} has no target/<profile> folder", exe.display()))?;
    Ok(profile_dir.join(format!("nevermet{}", std::env::consts::EXE_SUFFIX)))
}

/// `cargo run --example` builds the library and the example but not the binary, which could
/// then be missing or older than the library; when run under cargo, the binary is built with
/// the same cargo and profile (a no-op when it is current).
fn ensure_built(bin: &Path) -> anyhow::Result<()> {
    let Some(cargo) = std::env::var_os("CARGO") else {
        return Ok(());
    };
    let profile = bin
        .parent()
        .and_then(Path::file_name)
        .and_then(|p| p.to_str())
        .unwrap_or("release");
    let mut cmd = Command::new(cargo);
    cmd.args(["build", "--quiet", "--bin", "nevermet", "--manifest-path"])
        .arg(Path::new(env!("CARGO_MANIFEST_DIR")).join("Cargo.toml"));
    match profile {
        "debug" => {}
        "release" => {
            cmd.arg("--release");
        }
        other => {
            cmd.args(["--profile", other]);
        }
    }
    let status = cmd.status().context("running cargo build for the binary")?;
    ensure!(status.success(), "building the nevermet binary failed");
    Ok(())
}

/// What the kernel reports for one reaped child.
struct ChildRun {
    wall_s: f64,
    peak_rss_mib: f64,
    success: bool,
    stderr: String,
}

/// Runs a child to completion and reads its own peak resident memory from `wait4`, which
/// (unlike `RUSAGE_CHILDREN`) is not mixed with earlier children. The child is polled so
/// that a run past `limit` can be killed.
fn run_child(mut cmd: Command, limit: Option<Duration>) -> anyhow::Result<ChildRun> {
    let stderr_file = tempfile::tempfile().context("creating a file for the child's stderr")?;
    cmd.stdout(Stdio::null())
        .stderr(stderr_file.try_clone().context("sharing the stderr file")?);
    let start = Instant::now();
    let child = cmd.spawn().with_context(|| format!("starting {cmd:?}"))?;
    let pid = child.id() as libc::pid_t;
    let mut status: libc::c_int = 0;
    // SAFETY: rusage is plain data that wait4 fills in.
    let mut usage: libc::rusage = unsafe { std::mem::zeroed() };
    let mut killed = false;
    loop {
        // SAFETY: pid is our own unreaped child; status and usage are valid for writes.
        let r = unsafe { libc::wait4(pid, &mut status, libc::WNOHANG, &mut usage) };
        if r == pid {
            break;
        }
        if r < 0 {
            let err = std::io::Error::last_os_error();
            if err.kind() == std::io::ErrorKind::Interrupted {
                continue;
            }
            return Err(err).context("waiting for the child");
        }
        if !killed && limit.is_some_and(|l| start.elapsed() > l) {
            // SAFETY: signalling our own unreaped child.
            unsafe { libc::kill(pid, libc::SIGKILL) };
            killed = true;
        }
        std::thread::sleep(Duration::from_millis(5));
    }
    let wall_s = start.elapsed().as_secs_f64();
    // Already reaped through wait4; std's handle only drops.
    drop(child);
    let mut stderr = String::new();
    {
        use std::io::{Read, Seek};
        let mut f = stderr_file;
        f.rewind()?;
        f.read_to_string(&mut stderr)?;
    }
    if killed {
        stderr = format!("killed by --limit-min\n{stderr}");
    }
    Ok(ChildRun {
        wall_s,
        // Linux reports ru_maxrss in KiB.
        peak_rss_mib: usage.ru_maxrss as f64 / 1024.0,
        success: !killed && libc::WIFEXITED(status) && libc::WEXITSTATUS(status) == 0,
        stderr,
    })
}

fn folder_bytes(root: &Path) -> std::io::Result<(u64, usize)> {
    let (mut bytes, mut files) = (0, 0);
    let mut stack = vec![root.to_path_buf()];
    while let Some(dir) = stack.pop() {
        for entry in std::fs::read_dir(&dir)? {
            let entry = entry?;
            let meta = entry.metadata()?;
            if meta.is_dir() {
                stack.push(entry.path());
            } else {
                bytes += meta.len();
                files += 1;
            }
        }
    }
    Ok((bytes, files))
}

/// Sets the study file to one 10–50 s band, `draws` permutations, the channel pairing and one
/// pool of candidates.
fn edit_study(toml_path: &Path, draws: usize, channel_pairs: &str) -> anyhow::Result<()> {
    let text = std::fs::read_to_string(toml_path)
        .with_context(|| format!("reading {}", toml_path.display()))?;
    let mut doc: toml::Table = toml::from_str(&text).context("parsing the demo's study file")?;
    let mut band = toml::Table::new();
    band.insert("name".into(), "task".into());
    band.insert("min_period_s".into(), toml::Value::Float(BAND.0));
    band.insert("max_period_s".into(), toml::Value::Float(BAND.1));
    doc.insert(
        "bands".into(),
        toml::Value::Array(vec![toml::Value::Table(band)]),
    );
    let section = |doc: &mut toml::Table, name: &str| -> anyhow::Result<toml::Table> {
        doc.remove(name)
            .and_then(|v| v.as_table().cloned())
            .with_context(|| format!("the demo's study file has no [{name}]"))
    };
    let mut inference = section(&mut doc, "inference")?;
    inference.insert("permutations".into(), toml::Value::Integer(draws as i64));
    doc.insert("inference".into(), toml::Value::Table(inference));
    // One pool: every cross pair of members that no family or partner rule forbids is
    // admissible, the size a lab's whole cohort gives (the demo's sites would halve it).
    let mut pairing = section(&mut doc, "pairing")?;
    pairing.remove("pair_within");
    doc.insert("pairing".into(), toml::Value::Table(pairing));
    let mut synchrony = section(&mut doc, "synchrony")?;
    synchrony.insert("channel_pairs".into(), channel_pairs.into());
    doc.insert("synchrony".into(), toml::Value::Table(synchrony));
    std::fs::write(toml_path, toml::to_string(&doc)?)
        .with_context(|| format!("writing {}", toml_path.display()))
}

fn read_json(dir: &Path, name: &str) -> anyhow::Result<serde_json::Value> {
    let path = dir.join(name);
    let text =
        std::fs::read_to_string(&path).with_context(|| format!("reading {}", path.display()))?;
    serde_json::from_str(&text).with_context(|| format!("parsing {}", path.display()))
}

/// One scenario's figures, for the summary table.
struct Figures {
    dyads: usize,
    channel_pairs: String,
    demo_s: f64,
    study_mib: f64,
    run: Option<RunFigures>,
}

struct RunFigures {
    wall_s: f64,
    peak_rss_mib: f64,
    threads: usize,
    pair_blocks: u64,
    /// The stage the pair kernels run in ("pairs" when the run reports it, else "synchrony").
    kernel_stage: String,
    kernel_s: f64,
}

impl RunFigures {
    fn pair_blocks_per_s(&self) -> f64 {
        self.pair_blocks as f64 / self.kernel_s
    }

    fn us_per_pair_block_core(&self) -> f64 {
        self.kernel_s * self.threads as f64 * 1e6 / self.pair_blocks as f64
    }
}

fn scenario(
    bin: &Path,
    opts: &Options,
    dyads: usize,
    channel_pairs: &str,
) -> anyhow::Result<Figures> {
    println!();
    println!(
        "scenario: {dyads} dyads, {ROIS} regions × {CHANNELS_PER_ROI} channels, {} Hz, HbO + HbR, \
         3 conditions × {BLOCKS_PER_CONDITION} blocks of {BLOCK_S} s, band {}–{} s, \
         channel_pairs = {channel_pairs}, {} permutations",
        opts.sampling_hz, BAND.0, BAND.1, opts.draws
    );
    let dir = tempfile::tempdir().context("creating a temporary folder")?;
    let study = dir.path().join("study");
    let mut demo = Command::new(bin);
    demo.arg("demo")
        .arg("--out")
        .arg(&study)
        .args(["--dyads", &dyads.to_string()])
        .args(["--rois", &ROIS.to_string()])
        .args(["--channels-per-roi", &CHANNELS_PER_ROI.to_string()])
        .args(["--sampling-hz", &opts.sampling_hz.to_string()])
        .args(["--block-s", &BLOCK_S.to_string()])
        .args(["--blocks-per-condition", &BLOCKS_PER_CONDITION.to_string()]);
    let made = run_child(demo, None)?;
    ensure!(made.success, "nevermet demo failed:\n{}", made.stderr);
    let (bytes, files) = folder_bytes(&study)?;
    let study_mib = bytes as f64 / (1 << 20) as f64;
    println!(
        "  demo written        {:>9.2} s   {study_mib:.1} MiB in {files} files, peak {:.1} MiB",
        made.wall_s, made.peak_rss_mib
    );
    let toml_path = study.join("study.toml");
    edit_study(&toml_path, opts.draws, channel_pairs)?;
    let mut figures = Figures {
        dyads,
        channel_pairs: channel_pairs.to_string(),
        demo_s: made.wall_s,
        study_mib,
        run: None,
    };
    if opts.study_only {
        return Ok(figures);
    }

    // The pairing audit is quick and gives the size of the job before it starts, so even a
    // run stopped by --limit-min leaves a bound on its speed.
    let plan_dir = dir.path().join("plan");
    let mut plan = Command::new(bin);
    plan.arg("plan").arg(&toml_path).arg("--out").arg(&plan_dir);
    let planned = run_child(plan, None)?;
    ensure!(planned.success, "nevermet plan failed:\n{}", planned.stderr);
    let cost = read_json(&plan_dir, "plan.json")?["cost"].clone();
    let planned_pair_blocks = cost["pair_blocks"].as_u64().unwrap_or(0);
    println!(
        "  plan                {:>9.2} s   {} pairs, {planned_pair_blocks} pair-blocks, {} transforms",
        planned.wall_s, cost["pairs"], cost["transforms"]
    );

    let out = dir.path().join("out");
    let mut run = Command::new(bin);
    run.arg("run")
        .arg(&toml_path)
        .arg("--out")
        .arg(&out)
        .arg("--quiet");
    if let Some(t) = opts.threads {
        run.args(["--threads", &t.to_string()]);
    }
    let done = run_child(run, opts.limit)?;
    if !done.success {
        println!(
            "  run FAILED after {:.1} s (peak resident {:.1} MiB so far): {}",
            done.wall_s,
            done.peak_rss_mib,
            done.stderr.trim_end()
        );
        if planned_pair_blocks > 0 {
            let threads = opts.threads.unwrap_or_else(rayon::current_num_threads);
            println!(
                "  so at most {:.0} pair-blocks per second, at least {:.0} µs per pair-block per \
                 core ({threads} threads)",
                planned_pair_blocks as f64 / done.wall_s,
                done.wall_s * threads as f64 * 1e6 / planned_pair_blocks as f64
            );
        }
        return Ok(figures);
    }
    let timings = read_json(&out, "timings.json")?;
    let manifest = read_json(&out, "manifest.json")?;
    let threads = timings["threads"]
        .as_u64()
        .context("timings.json: threads")? as usize;
    let stages: Vec<(String, f64)> = timings["stages"]
        .as_array()
        .context("timings.json: stages")?
        .iter()
        .map(|s| {
            (
                s["stage"].as_str().unwrap_or("?").to_string(),
                s["seconds"].as_f64().unwrap_or(f64::NAN),
            )
        })
        .collect();
    let pair_blocks = manifest["counts"]["pair_blocks"]
        .as_u64()
        .context("manifest.json: counts.pair_blocks")?;
    println!(
        "  run                 {:>9.2} s   peak resident {:.1} MiB, {threads} threads",
        done.wall_s, done.peak_rss_mib
    );
    // Shares of the run's wall time, not of the sum of stages: a stage may contain others
    // (synchrony holds transforms and pairs when the run reports those).
    for (stage, secs) in &stages {
        println!(
            "    {stage:<17} {secs:>9.2} s   {:>5.1} % of the run",
            100.0 * secs / done.wall_s
        );
    }
    let kernel = stages
        .iter()
        .find(|s| s.0 == "pairs")
        .or_else(|| stages.iter().find(|s| s.0 == "synchrony"))
        .context("timings.json has neither a pairs nor a synchrony stage")?;
    let run_figures = RunFigures {
        wall_s: done.wall_s,
        peak_rss_mib: done.peak_rss_mib,
        threads,
        pair_blocks,
        kernel_stage: kernel.0.clone(),
        kernel_s: kernel.1,
    };
    println!(
        "  {pair_blocks} pair-blocks: {:.0} per second of {}, {:.2} µs per pair-block per core",
        run_figures.pair_blocks_per_s(),
        run_figures.kernel_stage,
        run_figures.us_per_pair_block_core()
    );
    figures.run = Some(run_figures);
    Ok(figures)
}

fn summary(all: &[Figures]) {
    println!();
    println!("summary");
    println!(
        "  {:>5} {:>5} {:>8} {:>9} {:>11} {:>9} {:>9} {:>10} {:>12} {:>11}",
        "dyads",
        "pairs",
        "demo s",
        "study MiB",
        "pair-blocks",
        "run s",
        "peak MiB",
        "kernel s",
        "pair-blk/s",
        "µs/pb/core"
    );
    for f in all {
        let run = f.run.as_ref();
        let cell = |g: &dyn Fn(&RunFigures) -> String| run.map_or("-".into(), g);
        println!(
            "  {:>5} {:>5} {:>8.2} {:>9.1} {:>11} {:>9} {:>9} {:>10} {:>12} {:>11}",
            f.dyads,
            f.channel_pairs,
            f.demo_s,
            f.study_mib,
            cell(&|r| r.pair_blocks.to_string()),
            cell(&|r| format!("{:.2}", r.wall_s)),
            cell(&|r| format!("{:.1}", r.peak_rss_mib)),
            cell(&|r| format!("{:.2}", r.kernel_s)),
            cell(&|r| format!("{:.0}", r.pair_blocks_per_s())),
            cell(&|r| format!("{:.2}", r.us_per_pair_block_core())),
        );
    }
    let find = |d: usize| {
        all.iter()
            .find(|f| f.dyads == d && f.channel_pairs == "same")
            .and_then(|f| f.run.as_ref())
    };
    if let (Some(small), Some(large)) = (find(35), find(140)) {
        println!(
            "  linear-scaling check, 140 vs 35 dyads: {:.2}× the pair-blocks, {:.2}× the kernel \
             time, per-pair-block cost ratio {:.2} (1.00 = linear), run time ratio {:.2}",
            large.pair_blocks as f64 / small.pair_blocks as f64,
            large.kernel_s / small.kernel_s,
            large.us_per_pair_block_core() / small.us_per_pair_block_core(),
            large.wall_s / small.wall_s
        );
    }
}

/// Times the spectral kernels one pair-block needs, through the public library API, on the
/// coarse time grid the engine uses and on the every-sample grid for comparison: one member's
/// transform (with its smoothed power), and the band coherence of one pair, alone and as one
/// of a group computed side by side. The segment is one block with its context on both sides.
fn micro(sampling_hz: f64) {
    let dt = 1.0 / sampling_hz;
    let context = (CONTEXT_S * sampling_hz).round() as usize;
    let block = (BLOCK_S * sampling_hz).round() as usize;
    let n = block + 2 * context;
    let grid = band_scale_grid(BAND.0, BAND.1, OMEGA0, SCALES_PER_OCTAVE);
    let coarse = CoarsePlan::new(n, dt, OMEGA0, &grid, context..context + block);
    let wavelet = WaveletPlan::new(n, dt, OMEGA0, &grid.scales);
    let full = CoherencePlan::new(n, dt, &grid, context..context + block);
    println!();
    println!(
        "micro-benchmarks: {sampling_hz} Hz, segment {n} samples ({BLOCK_S} s block + {CONTEXT_S} s \
         context each side), band {}–{} s, ω0 {OMEGA0}, {SCALES_PER_OCTAVE} scales per octave",
        BAND.0, BAND.1
    );
    println!(
        "  grid {} scales ({} in the band), FFT length {}, {} points outside the cone; {coarse:?}",
        grid.scales.len(),
        grid.band.len(),
        wavelet.padded_len(),
        full.n_points()
    );
    let mut rng = ChaCha8Rng::seed_from_u64(1);
    let mut signal = || -> Vec<f64> { (0..n).map(|_| rng.random::<f64>() - 0.5).collect() };
    let signals: Vec<Vec<f64>> = (0..2 * GROUP).map(|_| signal()).collect();

    let mut sc = coarse.scratch();
    let per_call = time_calls(|| {
        std::hint::black_box(coarse.member(&signals[0], &mut sc));
    });
    println!(
        "  coarse: member transform   {:>8.1} µs per call",
        per_call * 1e6
    );
    let members: Vec<MemberNodes> = signals.iter().map(|x| coarse.member(x, &mut sc)).collect();
    let per_call = time_calls(|| {
        std::hint::black_box(coarse.coherence(&members[0], &members[1], &mut sc));
    });
    println!(
        "  coarse: one pair alone     {:>8.2} µs per call",
        per_call * 1e6
    );
    let xs: Vec<&MemberNodes> = members[..GROUP].iter().collect();
    let ys: Vec<&MemberNodes> = members[GROUP..].iter().collect();
    let mut out = vec![coarse.coherence(xs[0], ys[0], &mut sc); GROUP];
    let per_call = time_calls(|| coarse.coherence_many(&xs, &ys, &mut out, &mut sc));
    println!(
        "  coarse: pairs {GROUP} at a time  {:>8.2} µs per pair   (mean R² of two noise signals {:.3})",
        per_call * 1e6 / GROUP as f64,
        out[0].mean_r2()
    );

    let zero = Complex64::new(0.0, 0.0);
    let mut scratch = vec![zero; wavelet.scratch_len()];
    let mut wx = vec![zero; wavelet.n_scales() * n];
    let mut wy = wx.clone();
    let per_call = time_calls(|| wavelet.transform_into(&signals[0], &mut wx, &mut scratch));
    println!(
        "  full:   member transform   {:>8.1} µs per call",
        per_call * 1e6
    );
    wavelet.transform_into(&signals[GROUP], &mut wy, &mut scratch);
    let mut cscratch = vec![zero; full.scratch_len()];
    let mut px = vec![0.0; full.power_len()];
    let mut py = px.clone();
    full.smoothed_power_into(&wx, &mut px, &mut cscratch);
    full.smoothed_power_into(&wy, &mut py, &mut cscratch);
    let mut last = 0.0;
    let per_call = time_calls(|| {
        last = full.coherence(&wx, &wy, &px, &py, &mut cscratch).mean_r2();
    });
    println!(
        "  full:   one pair           {:>8.1} µs per call   (same pair on the coarse grid: {:.6}, full: {last:.6})",
        per_call * 1e6,
        out[0].mean_r2()
    );
}

/// Seconds per call of `f`, repeated until at least MICRO_MIN_S have passed.
fn time_calls(mut f: impl FnMut()) -> f64 {
    f();
    let start = Instant::now();
    let mut calls = 0u64;
    while start.elapsed().as_secs_f64() < MICRO_MIN_S {
        f();
        calls += 1;
    }
    start.elapsed().as_secs_f64() / calls as f64
}

fn main() -> anyhow::Result<()> {
    let opts = options()?;
    let cores = std::thread::available_parallelism().map_or(0, usize::from);
    println!(
        "nevermet cohort benchmark: {cores} hardware threads, rayon uses {} here{}",
        rayon::current_num_threads(),
        match opts.threads {
            Some(t) => format!(", runs get --threads {t}"),
            None => ", runs use their default (all cores)".to_string(),
        }
    );
    if let Ok(v) = std::env::var("RAYON_NUM_THREADS") {
        println!("  RAYON_NUM_THREADS={v}");
    }
    if opts.micro {
        micro(opts.sampling_hz);
    }
    if opts.scenarios.is_empty() {
        return Ok(());
    }
    let bin = binary()?;
    if opts.build {
        ensure_built(&bin)?;
    }
    if !bin.is_file() {
        bail!(
            "{} not found: build it with `cargo build --release --bin nevermet`",
            bin.display()
        );
    }
    let source = if option_env!("CARGO_BIN_EXE_nevermet").is_some() {
        "from CARGO_BIN_EXE_nevermet"
    } else {
        "next to the example"
    };
    println!("  binary {} ({source})", bin.display());
    let mut all = Vec::new();
    for (dyads, pairs) in &opts.scenarios {
        all.push(scenario(&bin, &opts, *dyads, pairs)?);
    }
    summary(&all);
    Ok(())
}
