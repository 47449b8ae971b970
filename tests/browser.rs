//! The HTML report in a real browser: headless Chromium loads the page from disk, takes a
//! screenshot and dumps the DOM it built, and the checks read those, not the HTML source.
//!
//! Owns only these browser checks; the page itself is built by `nevermet::report`. Without
//! `/usr/bin/chromium` the checks are skipped with a note, except when `CI` is set (the CI
//! image installs it), where a missing browser is a failure. Set `NEVERMET_BROWSER_SHOTS` to
//! a directory to keep the screenshots for a look.

use std::fs::File;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::sync::OnceLock;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::{Duration, Instant};

use nevermet::report::data::{
    CellPlots, ContrastLine, MatrixPlot, MethodsInput, ReportData, ResultLine,
};
use nevermet::report::{html, methods};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;

const CHROMIUM: &str = "/usr/bin/chromium";
/// Window of the screenshot; the PNG must come out exactly this size.
const WINDOW: (u32, u32) = (1200, 2400);
/// A hung browser fails the test instead of stalling the suite.
const BROWSER_TIMEOUT: Duration = Duration::from_secs(120);

/// The browser to use, `None` (with a note) when it is missing outside CI.
fn chromium() -> Option<PathBuf> {
    let path = PathBuf::from(CHROMIUM);
    if path.exists() {
        return Some(path);
    }
    if std::env::var_os("CI").is_some() {
        panic!("{CHROMIUM} is missing but CI is set: the CI image must install chromium");
    }
    eprintln!("note: {CHROMIUM} not found; browser checks of the report skipped");
    None
}

/// Output of one headless run.
struct Run {
    stdout: String,
    stderr: String,
}

/// Runs headless Chromium on `page` with `mode` (`--screenshot=…` or `--dump-dom`), with a
/// fresh profile so no earlier state leaks in, and output captured through files (a DOM dump
/// is larger than a pipe buffer).
fn headless(browser: &Path, page: &Path, mode: &str, work: &Path) -> Run {
    let profile = tempfile::tempdir_in(work).expect("browser profile directory");
    static RUNS: AtomicUsize = AtomicUsize::new(0);
    let run = RUNS.fetch_add(1, Ordering::Relaxed);
    let out_path = work.join(format!("stdout-{run}.txt"));
    let err_path = work.join(format!("stderr-{run}.txt"));
    let out = File::create(&out_path).expect("browser stdout file");
    let err = File::create(&err_path).expect("browser stderr file");
    let page = page.canonicalize().expect("report page path");
    let mut child = Command::new(browser)
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
        ])
        .arg(format!("--user-data-dir={}", profile.path().display()))
        .args(["--enable-logging=stderr", "--v=0", mode])
        .arg(format!("--window-size={},{}", WINDOW.0, WINDOW.1))
        .arg(format!("file://{}", page.display()))
        .stdin(Stdio::null())
        .stdout(out)
        .stderr(err)
        .spawn()
        .expect("starting chromium");
    let start = Instant::now();
    let status = loop {
        if let Some(status) = child.try_wait().expect("waiting for chromium") {
            break status;
        }
        if start.elapsed() > BROWSER_TIMEOUT {
            let _ = child.kill();
            let _ = child.wait();
            panic!("chromium {mode} did not finish within {BROWSER_TIMEOUT:?}");
        }
        std::thread::sleep(Duration::from_millis(50));
    };
    let stdout = std::fs::read_to_string(&out_path).expect("reading browser stdout");
    let stderr = std::fs::read_to_string(&err_path).expect("reading browser stderr");
    assert!(
        status.success(),
        "chromium {mode} failed ({status}):\n{stderr}"
    );
    Run { stdout, stderr }
}

/// Console messages in Chromium's log. Chromium logs `console.error` and uncaught
/// exceptions alike as `INFO:CONSOLE…` lines (checked against a page with a deliberate
/// error), so the level is no guide: a page without scripts must log no console line at all.
fn console_errors(stderr: &str) -> Vec<&str> {
    stderr
        .lines()
        .filter(|l| l.contains("CONSOLE") || l.contains("Uncaught"))
        .collect()
}

/// Proves once per process, on a page made to fail, that `console_errors` sees the failure;
/// otherwise a change in Chromium's log format would turn the check into one that cannot fail.
fn console_check_can_fail(browser: &Path, work: &Path) {
    static DONE: OnceLock<()> = OnceLock::new();
    DONE.get_or_init(|| {
        let page = work.join("deliberate-error.html");
        std::fs::write(
            &page,
            "<!DOCTYPE html><html><body><p>x</p><script>console.error('deliberate');\
             notDefinedAnywhere();</script></body></html>",
        )
        .expect("writing the error page");
        let run = headless(browser, &page, "--dump-dom", work);
        let found = console_errors(&run.stderr);
        assert!(
            found.iter().any(|l| l.contains("deliberate"))
                && found.iter().any(|l| l.contains("Uncaught")),
            "the console check no longer sees errors; chromium printed:\n{}",
            run.stderr
        );
    });
}

/// Width and height from a PNG's IHDR chunk (PNG specification, §11.2.2: the signature is 8
/// bytes, then the IHDR length, type, and width and height as big-endian u32).
fn png_size(bytes: &[u8]) -> (u32, u32) {
    assert!(bytes.len() > 24, "PNG too short");
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n", "not a PNG");
    assert_eq!(&bytes[12..16], b"IHDR");
    let be = |b: &[u8]| u32::from_be_bytes([b[0], b[1], b[2], b[3]]);
    (be(&bytes[16..20]), be(&bytes[20..24]))
}

/// Text between `open` and the next `close` after it.
fn between<'a>(s: &'a str, open: &str, close: &str) -> Option<&'a str> {
    let start = s.find(open)? + open.len();
    let len = s[start..].find(close)?;
    Some(&s[start..start + len])
}

/// The ids of the cell sections the page marks significant, read from the HTML source.
fn significant_cells(source: &str) -> Vec<String> {
    source
        .split("<section class=\"cell\" id=\"")
        .skip(1)
        .filter_map(|rest| {
            let id = rest.split('"').next()?;
            let body = rest.split("</section>").next()?;
            body.contains("class=\"badge sig\"").then(|| id.to_owned())
        })
        .collect()
}

/// What the checks saw, for callers with more to check.
struct Seen {
    dom: String,
    significant: Vec<String>,
}

/// The browser checks every report page must pass; `None` when the browser is missing.
fn check_page(page: &Path) -> Option<Seen> {
    let browser = chromium()?;
    let work = tempfile::tempdir().expect("browser work directory");
    console_check_can_fail(&browser, work.path());
    let source = std::fs::read_to_string(page).expect("reading the report page");

    let shot = work.path().join("shot.png");
    let run = headless(
        &browser,
        page,
        &format!("--screenshot={}", shot.display()),
        work.path(),
    );
    let png = std::fs::read(&shot).expect("the screenshot was not written");
    assert!(!png.is_empty(), "empty screenshot");
    assert_eq!(png_size(&png), WINDOW, "screenshot size");
    let errors = console_errors(&run.stderr);
    assert!(errors.is_empty(), "console errors: {errors:#?}");
    if let Some(dir) = std::env::var_os("NEVERMET_BROWSER_SHOTS") {
        let name = page.file_stem().map_or("page".into(), |s| s.to_owned());
        let keep = Path::new(&dir).join(name).with_extension("png");
        std::fs::copy(&shot, &keep).expect("keeping the screenshot");
        eprintln!("screenshot kept at {}", keep.display());
    }

    let run = headless(&browser, page, "--dump-dom", work.path());
    let errors = console_errors(&run.stderr);
    assert!(errors.is_empty(), "console errors: {errors:#?}");
    let dom = run.stdout;
    assert!(dom.contains("</html>"), "no DOM dumped:\n{}", run.stderr);

    // The methods paragraph as parsed. The DOM serialiser escapes only `&`, `<`, `>` (and
    // no-break spaces) in text (HTML Living Standard, "serialising HTML fragments"), while
    // the page also escapes quotes; undo the quote escapes before comparing.
    let written = between(&source, "<p id=\"methods\">", "</p>").expect("no methods paragraph");
    let written = written.replace("&quot;", "\"").replace("&#39;", "'");
    let parsed = between(&dom, "<p id=\"methods\">", "</p>").expect("methods missing in DOM");
    assert!(!parsed.trim().is_empty(), "empty methods paragraph");
    assert_eq!(parsed, written, "methods text changed in parsing");

    // No label turned into markup: the page has no script element at all.
    assert!(
        !dom.to_lowercase().contains("<script"),
        "a script element was parsed"
    );

    let significant = significant_cells(&source);
    for id in &significant {
        let section = between(&dom, &format!("id=\"{id}\""), "</section>")
            .unwrap_or_else(|| panic!("section {id} missing in the DOM"));
        assert!(section.contains("<svg"), "no figure in significant {id}");
    }
    Some(Seen { dom, significant })
}

/// The browser checks on a report page written by the program (for the end-to-end test).
pub fn demo_report_page(path: &Path) {
    let _ = check_page(path);
}

/// Hand-made inputs for the page: invented ids, values drawn from a fixed seed.
fn sample_report() -> ReportData {
    let mut rng = ChaCha8Rng::seed_from_u64(41);
    // Approximately normal: the sum of twelve uniforms minus six has mean 0 and variance 1.
    let mut normal = move || (0..12).map(|_| rng.random::<f64>()).sum::<f64>() - 6.0;
    let dyad_ids: Vec<String> = (1..=12)
        .map(|i| {
            if i == 5 {
                "<script>alert(1)</script>".to_owned()
            } else {
                format!("pd{i:02}")
            }
        })
        .collect();
    let labels = [
        ("task", "hbo", "slow", "frontal <left>", 0.37),
        ("task", "hbr", "slow", "frontal <left>", 0.46),
        ("a&b\"c", "hbo", "slow", "parietal", 0.36),
    ];
    let mut cells = Vec::new();
    let mut results = Vec::new();
    for (k, (condition, chromophore, band, roi, observed)) in labels.iter().enumerate() {
        let null: Vec<f64> = (0..999).map(|_| 0.35 + 0.02 * normal()).collect();
        let dyads = dyad_ids
            .iter()
            .enumerate()
            .map(|(d, id)| {
                let pseudo = 0.35 + 0.03 * normal();
                let real = if d == 7 && k == 0 {
                    f64::NAN
                } else {
                    pseudo + (observed - 0.35) + 0.04 * normal()
                };
                (id.clone(), real, pseudo)
            })
            .collect();
        let significant = k == 1;
        cells.push(CellPlots {
            label: format!("joint · {chromophore} · {condition} · {roi}"),
            significant,
            observed: *observed,
            null,
            dyads,
        });
        results.push(ResultLine {
            condition: condition.to_string(),
            chromophore: chromophore.to_string(),
            band: band.to_string(),
            roi: roi.to_string(),
            test: "re-pairing".into(),
            n_dyads: 12,
            n_pseudo: 126,
            real_mean: *observed,
            pseudo_mean: 0.351,
            excess: observed - 0.351,
            effect_size: (observed - 0.35) / 0.02,
            ci_low: observed - 0.351 - 0.03,
            ci_high: observed - 0.351 + 0.03,
            p: if significant { 0.001 } else { 0.031 },
            p_adj: if significant { 0.003 } else { 0.062 },
            correction: "holm".into(),
            significant,
        });
    }
    let n = 12;
    let mut values = Vec::with_capacity(n * n);
    let mut status = Vec::with_capacity(n * n);
    for r in 0..n {
        for c in 0..n {
            let s = if r == c {
                2
            } else if (r / 4) != (c / 4) && (r + c) % 5 == 0 {
                0
            } else {
                1
            };
            status.push(s);
            values.push(match s {
                0 => f64::NAN,
                2 => 0.42 + 0.03 * normal(),
                _ if r == 3 && c == 9 => f64::NAN,
                _ => 0.35 + 0.03 * normal(),
            });
        }
    }
    let methods_input = MethodsInput {
        tool_version: "0.1.0".into(),
        measure: "wtc".into(),
        omega0: 6.0,
        scales_per_octave: 12,
        bands: vec![("slow".into(), 10.0, 40.0)],
        chromophores: vec!["hbo".into(), "hbr".into()],
        channel_pairs: "same".into(),
        min_channels_per_roi: 2,
        context_s: 90.0,
        coarse_grid: true,
        block_lengths: vec![
            ("task".into(), vec![120.0, 118.5]),
            ("a&b\"c".into(), vec![60.0; 3]),
        ],
        mode: "roles".into(),
        roles: vec!["guide".into(), "builder".into()],
        keep_apart: vec!["household".into()],
        pair_within: vec![],
        n_dyads: 12,
        n_members: 24,
        admissible_pairs: 126,
        excluded_by_rule: vec![
            ("same-participant".into(), 0),
            ("ever-partners".into(), 0),
            ("keep_apart:household".into(), 6),
        ],
        repairings_count: "170512784".into(),
        repairings_exact: false,
        permutations: 999,
        sampler: "rejection sampling of uniform re-pairings within strata (acceptance 0.301)"
            .into(),
        correction: "holm".into(),
        family: vec!["chromophore".into(), "roi".into()],
        alpha: 0.05,
        alternative: "greater".into(),
        bootstrap: 2000,
        seed: 20261201,
        pseudo_only: false,
        allowances: vec![],
    };
    ReportData {
        title: "Joint building study <pilot> & co".into(),
        tool_version: "0.1.0".into(),
        generated_note: "seed 20261201, 2 threads".into(),
        study_numbers: vec![
            ("Dyads".into(), "12".into()),
            ("Members".into(), "24".into()),
            ("Conditions".into(), "2".into()),
            ("Blocks".into(), "5".into()),
            ("Channels".into(), "16".into()),
            ("ROIs".into(), "2".into()),
        ],
        rules: vec![
            ("same-participant".into(), 0),
            ("ever-partners".into(), 0),
            ("keep_apart:household".into(), 6),
        ],
        pairing_counts: vec![
            ("Candidate pairs".into(), "144".into()),
            ("Real pairs".into(), "12".into()),
            ("Admissible pseudo-pairs".into(), "126".into()),
            ("Excluded".into(), "6".into()),
            ("Re-pairings".into(), "170512784 (exact count)".into()),
            ("Sampler".into(), "rejection sampling".into()),
        ],
        methods: methods::paragraph(&methods_input),
        results,
        contrasts: vec![ContrastLine {
            contrast: "task − a&b\"c".into(),
            chromophore: "hbo".into(),
            band: "slow".into(),
            roi: "frontal <left>".into(),
            n_dyads: 11,
            mean_difference: 0.052,
            effect_size: 0.61,
            ci_low: -0.004,
            ci_high: 0.108,
            p: 0.068,
            p_adj: 0.136,
            significant: false,
        }],
        cells,
        matrix: Some(MatrixPlot {
            label: "task · hbr · slow · frontal <left>".into(),
            row_labels: dyad_ids.iter().map(|d| format!("{d}-guide")).collect(),
            col_labels: dyad_ids.iter().map(|d| format!("{d}-builder")).collect(),
            values: ndarray::Array2::from_shape_vec((n, n), values).unwrap(),
            status: ndarray::Array2::from_shape_vec((n, n), status).unwrap(),
        }),
        warnings: vec![
            "block 2 of \"task\" shortened to 118.5 s <the shortest across dyads>".into(),
        ],
    }
}

#[test]
fn report_renders_in_headless_chromium() {
    let data = sample_report();
    let page_html = html::render(&data);
    assert!(!page_html.to_lowercase().contains("<script"));
    let dir = tempfile::tempdir().expect("temporary directory");
    let page = dir.path().join("report.html");
    std::fs::write(&page, &page_html).expect("writing the report page");
    let Some(seen) = check_page(&page) else {
        return;
    };
    // The check above keys on the page's own markers; make sure it found the one
    // significant cell rather than nothing.
    assert_eq!(seen.significant, vec!["cell-2".to_owned()]);
    assert!(seen.dom.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
    assert!(seen.dom.contains("a&amp;b\"c"));
    assert_eq!(seen.dom.matches("class=\"cell\"").count(), 3);
    assert!(seen.dom.contains("id=\"matrix\""));
}
