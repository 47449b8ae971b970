//! The synchrony engine on real study folders: real and pseudo pairs take the same code path,
//! tiling under a memory budget never changes a value, and every measure and channel pairing
//! runs end to end.

use nevermet::engine::{self, Recorded, Silent};
use nevermet::pipeline;
use nevermet::study;
use nevermet::table::read_table;

use crate::util::{TempStudy, stderr};

fn compute(s: &TempStudy, memory_bytes: u64) -> (nevermet::study::Study, engine::Synchrony) {
    let st = study::load(&s.toml()).unwrap();
    let plan = pipeline::build_plan(&st).unwrap();
    let syn = pipeline::synchrony(&st, &plan, memory_bytes, &Silent).unwrap();
    (st, syn)
}

/// Every block value of every pair, in order.
fn all_values(syn: &engine::Synchrony) -> Vec<(f64, u32)> {
    let mut out = Vec::new();
    for p in 0..syn.pairs.len() {
        for b in 0..syn.blocks.len() {
            for h in 0..syn.chromophores.len() {
                for k in 0..syn.bands.len() {
                    for r in 0..syn.rois.len() {
                        let (v, n, _) = syn.block_value(p, b, h, k, r);
                        out.push((v, n));
                    }
                }
            }
        }
    }
    out
}

#[test]
fn tiling_under_a_small_memory_budget_gives_identical_values() {
    let s = TempStudy::new();
    let (st, whole) = compute(&s, 8 << 30);
    // Room for only a few members' transforms at a time: the pair matrix is tiled, which
    // shows as members transformed more than once (more transforms done than planned).
    let plan = pipeline::build_plan(&st).unwrap();
    let tiled_at = |budget: u64| {
        let rec = Recorded::default();
        let syn = pipeline::synchrony(&st, &plan, budget, &rec).ok()?;
        let (_, total, done) = rec.counters.lock().unwrap()[0].clone();
        (done > total).then_some(syn)
    };
    let tiled = (8..24)
        .rev()
        .find_map(|bits| tiled_at(1 << bits))
        .expect("some budget tiles the pair matrix");
    let a = all_values(&whole);
    let b = all_values(&tiled);
    assert_eq!(a.len(), b.len());
    for (x, y) in a.iter().zip(&b) {
        assert!(
            x.0.to_bits() == y.0.to_bits() && x.1 == y.1,
            "{x:?} vs {y:?}"
        );
    }
    // A budget below two members' transforms is refused with the figure to raise it to.
    let err = pipeline::synchrony(&st, &plan, 1000, &Silent).unwrap_err();
    assert!(err.to_string().contains("raise --memory-gib"), "{err}");
}

#[test]
fn progress_counts_every_transform_and_pair_block() {
    let s = TempStudy::new();
    let st = study::load(&s.toml()).unwrap();
    let plan = pipeline::build_plan(&st).unwrap();
    let rec = Recorded::default();
    pipeline::synchrony(&st, &plan, 8 << 30, &rec).unwrap();
    let counters = rec.counters.lock().unwrap();
    assert_eq!(counters.len(), 2);
    for (name, total, done) in counters.iter() {
        assert!(*total > 0 && total == done, "{name}: {done} of {total}");
    }
}

/// A pseudo-pair made of exactly the signals and timing of a real pair has exactly the real
/// pair's values: nothing in the engine treats real pairs differently.
#[test]
fn a_pseudo_pair_with_a_real_pairs_signals_has_the_real_pairs_values() {
    let s = TempStudy::new();
    s.edit("study.toml", |t| {
        t.replace("keep_apart = [\"family\"]", "keep_apart = []")
            .replace("pair_within = [\"site\"]", "pair_within = []")
    });
    let members = read_table(&s.path("members.tsv")).unwrap();
    let col = |name: &str, r: usize| members.column(name).unwrap().text(r).unwrap();
    // Row 2 is the first dyad's child; find another dyad's child whose participant differs.
    let (d1, c1_rec) = (col("dyad", 1), col("recording", 1));
    // Neither person of the target dyad may be one of the first dyad's (ever-partners).
    let people_of = |d: &str| -> Vec<String> {
        (0..members.height())
            .filter(|&r| col("dyad", r) == d)
            .map(|r| col("participant", r))
            .collect()
    };
    let first = people_of(&d1);
    let target = (0..members.height())
        .find(|&r| {
            col("role", r) == "child"
                && col("dyad", r) != d1
                && !people_of(&col("dyad", r)).iter().any(|p| first.contains(p))
        })
        .unwrap();
    let (d2, c2_rec) = (col("dyad", target), col("recording", target));
    std::fs::copy(
        s.path(&format!("recordings/{c1_rec}")),
        s.path(&format!("recordings/{c2_rec}")),
    )
    .unwrap();
    s.edit("events.tsv", |t| {
        let mut out = Vec::new();
        for line in t.lines() {
            let first = line.split('\t').next().unwrap();
            if first == d2 {
                continue;
            }
            out.push(line.to_string());
            if first == d1 {
                out.push(line.replacen(&d1, &d2, 1));
            }
        }
        out.join("\n") + "\n"
    });
    let out = s.dir.path().join("out");
    let o = s.run_into(&out, &[]);
    assert!(o.status.success(), "{}", stderr(&o));
    let syn = read_table(&out.join("synchrony.parquet")).unwrap();
    let text = |c: &str, r: usize| syn.column(c).unwrap().text(r).unwrap_or_default();
    let g1 = format!("{d1}:{}", col("participant", 0));
    let real_id = format!("{d1}:{}", col("participant", 1));
    let pseudo_id = format!("{d2}:{}", col("participant", target));
    let key = |r: usize| {
        (
            text("condition", r),
            text("block", r),
            text("chromophore", r),
            text("band", r),
            text("roi", r),
        )
    };
    let mut real = std::collections::BTreeMap::new();
    let mut pseudo = std::collections::BTreeMap::new();
    for r in 0..syn.height() {
        if text("member_a", r) != g1 {
            continue;
        }
        if text("member_b", r) == real_id {
            real.insert(key(r), text("value", r));
        } else if text("member_b", r) == pseudo_id {
            pseudo.insert(key(r), text("value", r));
        }
    }
    assert!(!real.is_empty());
    assert_eq!(real, pseudo);
}

#[test]
fn correlation_and_all_channel_pairs_run_end_to_end() {
    for (edit, roi) in [
        (("measure = \"wtc\"", "measure = \"corr\""), "prefrontal"),
        (
            ("channel_pairs = \"same\"", "channel_pairs = \"all\""),
            "prefrontal~occipital",
        ),
    ] {
        let s = TempStudy::new();
        s.edit("study.toml", |t| {
            t.replace(edit.0, edit.1)
                .replace("permutations = 10000", "permutations = 500")
        });
        let out = s.dir.path().join("out");
        let o = s.run_into(&out, &[]);
        assert!(o.status.success(), "{}", stderr(&o));
        let results = std::fs::read_to_string(out.join("results.tsv")).unwrap();
        assert!(results.contains(roi), "{edit:?}: {results}");
        if edit.1.contains("corr") {
            assert!(results.contains("broadband"));
        }
    }
}

/// The coarse time grid (the default) against the every-sample computation on a whole study:
/// every block value of every pair, chromophore, band and ROI agrees within 1e-3 in R², and
/// the point counts that weight the blocks are identical.
#[test]
fn coarse_time_grid_matches_the_full_grid_on_a_study() {
    let coarse = TempStudy::new();
    let full = TempStudy::new();
    full.edit("study.toml", |t| {
        t.replace("[synchrony]\n", "[synchrony]\ntime_grid = \"full\"\n")
    });
    let (_, a) = compute(&coarse, 8 << 30);
    let (_, b) = compute(&full, 8 << 30);
    assert_eq!(a.weights, b.weights);
    let (a, b) = (all_values(&a), all_values(&b));
    assert_eq!(a.len(), b.len());
    let mut worst = 0.0f64;
    for (x, y) in a.iter().zip(&b) {
        assert_eq!(x.1, y.1);
        assert_eq!(x.0.is_nan(), y.0.is_nan());
        if x.0.is_finite() {
            worst = worst.max((x.0 - y.0).abs());
        }
    }
    assert!(worst <= 1e-3, "worst block value difference {worst}");
    eprintln!("coarse vs full time grid on the demo study: worst difference {worst:.2e}");
}
