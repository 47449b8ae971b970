//! The tool's promise on whole studies: synthetic null studies (every member carries the
//! shared task response, nobody is coupled) are rejected at about the nominal rate α = 0.05,
//! and the demo's coupling is found with high power. Each study goes through the full
//! pipeline: generated files → loading and validation → pairing → WTC → inference
//! (`nevermet::calibration`). Larger runs: `cargo run --release --example calibrate`.
//!
//! Bounds: under a test of size α the rejections among N independent studies are
//! Binomial(N, α); each asserted count must lie in the two-sided range that such a test leaves
//! with probability at most 0.001 per side (exact binomial tails). With N = 600 that range is
//! 15..=48 rejections (0.025–0.080), so a test of size 0.10 (an expected 60 rejections, sd 7.3)
//! fails it with probability 0.94 (scipy.stats.binom: P(X ≤ 48 | 600, 0.10) = 0.055).

use nevermet::calibration::{Design, Tally, binomial_bounds, tally};

const ALPHA: f64 = 0.05;
const TAIL: f64 = 0.001;
const STUDIES: usize = 600;

fn check(label: &str, what: &str, count: usize, t: &Tally, two_sided: bool) {
    let (lo, hi) = binomial_bounds(t.studies, ALPHA, TAIL);
    let rate = t.rate(count);
    let ok = count <= hi && (!two_sided || count >= lo);
    assert!(
        ok,
        "{label}, {what}: {count} of {} studies rejected ({rate:.3}); a test of size {ALPHA} \
         gives {lo}..={hi}",
        t.studies
    );
}

fn report(label: &str, t: &Tally) {
    let r = |c: (usize, usize)| format!("{:.3} / {:.3}", t.rate(c.0), t.rate(c.1));
    println!(
        "{label} ({} null studies; single cell / any cell of the family under maxstat):\n  \
         re-pairing, reference all       {}\n  re-pairing, reference pseudo-only {}\n  \
         dyad-contrast                   {}",
        t.studies,
        r(t.all),
        r(t.pseudo_only),
        r(t.dyad_contrast)
    );
}

#[test]
fn null_studies_hold_their_size_in_small_pools() {
    let designs = [
        (Design::small("one pool of 8 dyads", 8, true, 0.0), 10_000),
        (
            Design::small("two sites of 5 dyads", 10, false, 0.0),
            20_000,
        ),
        (
            Design::small(
                "12 dyads, two sites of 6 (the demo's rules)",
                12,
                false,
                0.0,
            ),
            30_000,
        ),
    ];
    for (design, first_seed) in &designs {
        let t = tally(design, *first_seed, STUDIES).unwrap();
        report(&design.label, &t);
        // The default reference set holds the observed pairing: its size must be α, both ways,
        // in one cell fixed in advance; family-wise under maxstat at most α.
        check(&design.label, "re-pairing, one cell", t.all.0, &t, true);
        check(&design.label, "re-pairing, family", t.all.1, &t, false);
        check(
            &design.label,
            "dyad-contrast, one cell",
            t.dyad_contrast.0,
            &t,
            false,
        );
        check(
            &design.label,
            "dyad-contrast, family",
            t.dyad_contrast.1,
            &t,
            false,
        );
    }
}

#[test]
fn the_demo_coupling_is_found() {
    let design = Design::small("two sites of 6, demo coupling", 12, false, 1.0);
    let t = tally(&design, 50_000, 40).unwrap();
    let power = t.rate(t.all.0);
    println!(
        "studies with the demo's coupling: {}, power {power:.2} (re-pairing, one cell), {:.2} \
         (dyad-contrast)",
        t.studies,
        t.rate(t.dyad_contrast.0)
    );
    assert!(power >= 0.8, "power {power}");
}
