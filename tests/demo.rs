//! The committed demo study: it is exactly what the generator writes, its pairing audit agrees
//! with a hand count of its family structure, and the whole analysis recovers its ground truth
//! (`truth.json`), with the report rendering in a browser.

use std::path::{Path, PathBuf};

use crate::util::{nevermet, stderr, stdout};

fn demo_data() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data")
}

fn files_under(root: &Path) -> Vec<PathBuf> {
    let mut out = Vec::new();
    let mut stack = vec![root.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).unwrap() {
            let p = e.unwrap().path();
            if p.is_dir() {
                stack.push(p);
            } else {
                out.push(p.strip_prefix(root).unwrap().to_path_buf());
            }
        }
    }
    out.sort();
    out
}

#[test]
fn demo_data_is_exactly_what_the_generator_writes() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("demo");
    let o = nevermet(&["demo", "--out", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    let committed = files_under(&demo_data());
    assert_eq!(committed, files_under(&out), "file lists differ");
    let mut total = 0;
    for f in &committed {
        let a = std::fs::read(demo_data().join(f)).unwrap();
        total += a.len();
        assert!(
            a == std::fs::read(out.join(f)).unwrap(),
            "{} differs from a fresh demo",
            f.display()
        );
    }
    assert!(total < 10 << 20, "demo-data is {total} bytes");
}

#[test]
fn demo_pairing_audit_matches_a_hand_count() {
    let dir = tempfile::tempdir().unwrap();
    let o = nevermet(&[
        "plan",
        demo_data().join("study.toml").to_str().unwrap(),
        "--out",
        dir.path().to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let plan: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("plan.json")).unwrap())
            .unwrap();
    // Hand count of the demo's structure (12 dyads t01..t12, grandparents as rows, children as
    // columns, 12 × 12 = 144 candidates, 12 real):
    // - pair_within site: t01..t06 at one site, t07..t12 at the other, so the 2 × 6 × 6 = 72
    //   cross-site candidates are excluded.
    // - family f01: grandparent g101 is in t01 (with c201) and t02 (with c202), c201 and c202
    //   are siblings. t01:g101 × t02:c202 and t02:g101 × t01:c201 pair people who are partners
    //   in a real dyad (ever-partners: 2) and share the family (keep_apart:family).
    // - family f07: twins c207 (t07) and c208 (t08) with grandparents g107 and g108 of the same
    //   family: t07:g107 × t08:c208 and t08:g108 × t07:c207 are keep_apart:family (2 more, 4 in
    //   all); none of them ever-partners.
    // - no row and column member is the same participant (roles differ): same-participant 0.
    // All four family exclusions are within a site, so excluded = 72 + 4 = 76 and admissible =
    // 144 − 12 − 76 = 56. Partners: members of t01, t02, t07, t08 have 6 − 1 − 1 = 4 admissible
    // partners, all others 6 − 1 = 5.
    assert_eq!(plan["candidates"], 144);
    assert_eq!(plan["real"], 12);
    assert_eq!(plan["excluded"], 76);
    assert_eq!(plan["admissible_pairs"], 56);
    assert_eq!(plan["excluded_by_rule"]["pair_within:site"], 72);
    assert_eq!(plan["excluded_by_rule"]["keep_apart:family"], 4);
    assert_eq!(plan["excluded_by_rule"]["ever-partners"], 2);
    assert_eq!(plan["excluded_by_rule"]["same-participant"], 0);
    for (member, n) in plan["members"].as_object().unwrap() {
        let dyad = member.split(':').next().unwrap();
        let want = if ["t01", "t02", "t07", "t08"].contains(&dyad) {
            4
        } else {
            5
        };
        assert_eq!(n, want, "{member}");
    }
    // Each site is a 6 × 6 block whose admissible cells are the off-diagonal ones minus the two
    // family cells between its first two dyads (t01/t02 and t07/t08), and no re-pairing crosses
    // sites, so the count is the square of one block's count, taken here by brute force over
    // all 720 permutations of 6 columns.
    let per_site = {
        let mut n = 0u64;
        let mut perm: Vec<usize> = (0..6).collect();
        permute(&mut perm, 0, &mut |p| {
            let ok = (0..6).all(|r| p[r] != r) && p[0] != 1 && p[1] != 0;
            n += u64::from(ok);
        });
        n
    };
    assert_eq!(
        plan["repairings"]["sets"]["pseudo-only"]["count_text"],
        (per_site * per_site).to_string()
    );
    // The default reference set also lets a re-pairing keep real pairs (the diagonal).
    let per_site_all = {
        let mut n = 0u64;
        let mut perm: Vec<usize> = (0..6).collect();
        permute(&mut perm, 0, &mut |p| {
            n += u64::from(p[0] != 1 && p[1] != 0)
        });
        n
    };
    assert_eq!(plan["repairings"]["reference"], "all");
    assert_eq!(
        plan["repairings"]["count_text"],
        (per_site_all * per_site_all).to_string()
    );
    assert_eq!(plan["repairings"]["exact"], true);
    let pairs = std::fs::read_to_string(dir.path().join("pairs.tsv")).unwrap();
    assert!(
        pairs.contains("t01:g101\tt02:c202\tt01\tt02\texcluded\tever-partners;keep_apart:family"),
        "{pairs}"
    );
}

fn permute(p: &mut Vec<usize>, k: usize, f: &mut impl FnMut(&[usize])) {
    if k == p.len() {
        f(p);
        return;
    }
    for i in k..p.len() {
        p.swap(k, i);
        permute(p, k + 1, f);
        p.swap(k, i);
    }
}

#[test]
fn the_demo_analysis_recovers_the_ground_truth() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let o = nevermet(&[
        "run",
        demo_data().join("study.toml").to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--quiet",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(stdout(&o).contains("significant"), "{}", stdout(&o));
    let truth: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(demo_data().join("truth.json")).unwrap())
            .unwrap();
    let effect: Vec<(String, String, String)> = truth["effect_cells"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| {
            (
                c["condition"].as_str().unwrap().into(),
                c["chromophore"].as_str().unwrap().into(),
                c["roi"].as_str().unwrap().into(),
            )
        })
        .collect();
    assert_eq!(effect.len(), 4);
    let results = nevermet::table::read_table(&out.join("results.tsv")).unwrap();
    let cell = |c: &str, r: usize| results.column(c).unwrap().text(r).unwrap_or_default();
    let mut null_hits = Vec::new();
    for r in 0..results.height() {
        let key = (cell("condition", r), cell("chromophore", r), cell("roi", r));
        let significant = cell("significant", r) == "true";
        let excess: f64 = cell("excess", r).parse().unwrap();
        if effect.contains(&key) {
            // The true cells: real pairs above pseudo-pairs, significant after maxstat, in both tests.
            assert!(
                excess > 0.03,
                "{key:?} {}: excess {excess}",
                cell("test", r)
            );
            assert!(significant, "{key:?} {} not significant", cell("test", r));
        } else {
            assert!(excess.abs() < 0.04, "{key:?}: excess {excess}");
            if significant {
                null_hits.push(format!("{key:?} {}", cell("test", r)));
            }
        }
    }
    // 28 null tests in 12 families (condition × test; the joint families also hold true cells),
    // each family-wise error controlled at 5 %: one false family is within what alpha allows.
    assert!(
        null_hits.len() <= 1,
        "null cells significant: {null_hits:?}"
    );
    let contrasts = nevermet::table::read_table(&out.join("contrasts.tsv")).unwrap();
    let ccell = |c: &str, r: usize| contrasts.column(c).unwrap().text(r).unwrap_or_default();
    for r in 0..contrasts.height() {
        let key = (
            "joint".to_string(),
            ccell("chromophore", r),
            ccell("roi", r),
        );
        if effect.contains(&key) {
            assert_eq!(
                ccell("significant", r),
                "true",
                "joint-vs-parallel in {key:?}"
            );
        }
    }
    // 10000 of the 28224 re-pairings were drawn: the methods paragraph must say sampled, not
    // exact (the count of re-pairings is exact, the null distribution is not).
    let page = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(
        page.contains("estimated from K = 10000 re-pairings drawn uniformly"),
        "methods paragraph"
    );
    assert!(
        !page.contains("obtained exactly"),
        "methods paragraph claims an exact null"
    );
    crate::browser::demo_report_page(&out.join("report.html"));
}

/// Writes a demo with extra options into a fresh folder and loads it with the library.
fn generated(extra: &[&str]) -> (tempfile::TempDir, PathBuf, nevermet::study::Study) {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("study");
    let mut args = vec!["demo", "--out", out.to_str().unwrap()];
    args.extend_from_slice(extra);
    let o = nevermet(&args);
    assert!(o.status.success(), "{}", stderr(&o));
    let study = nevermet::study::load(&out.join("study.toml"))
        .unwrap_or_else(|e| panic!("the generated study must load: {e}"));
    (dir, out, study)
}

#[test]
fn a_four_region_study_with_minute_blocks_loads_as_designed() {
    let (_dir, out, study) = generated(&[
        "--dyads",
        "8",
        "--rois",
        "4",
        "--channels-per-roi",
        "4",
        "--sampling-hz",
        "10",
        "--block-s",
        "60",
        "--blocks-per-condition",
        "2",
    ]);
    assert!(study.warnings.is_empty(), "{:?}", study.warnings);
    assert_eq!(study.dyads.len(), 8);
    assert_eq!(study.members.len(), 16);
    assert_eq!(
        study.rois,
        ["prefrontal", "temporoparietal", "occipital", "central"]
    );
    assert_eq!(study.channels.len(), 16);
    for roi in &study.rois {
        assert_eq!(study.channels.iter().filter(|c| &c.roi == roi).count(), 4);
    }
    assert!((study.dt - 0.1).abs() < 1e-12, "dt {}", study.dt);
    // Recording length by hand: 100 s before the first block, 6 blocks of 60 s, 5 pauses of
    // 40 s and 110 s after the last block: 770 s, 7700 samples at 10 Hz.
    for r in &study.recordings {
        assert_eq!(r.n, 7700, "{}", r.path.display());
        assert_eq!(r.signals.len(), 16 * 2, "HbO and HbR of every channel");
    }
    assert_eq!(study.events.len(), 8 * 3 * 2);
    assert!(study.events.iter().all(|e| e.duration == 60.0));
    let names: Vec<&str> = study.conditions.iter().map(|c| c.name.as_str()).collect();
    assert_eq!(names, ["joint", "parallel", "rest"]);
    for c in &study.conditions {
        assert_eq!(c.blocks.len(), 2, "{}", c.name);
        for b in &c.blocks {
            assert_eq!(b.length, 600, "60 s at 10 Hz");
            assert_eq!(
                b.context, 900,
                "the full 90 s of context fits on both sides"
            );
        }
    }
    // The fourth region carries no effect: the truth lists 3 conditions × 4 regions × 2
    // chromophores, with the effect in joint blocks of the first two regions only.
    let truth: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("truth.json")).unwrap()).unwrap();
    let cells = truth["cells"].as_array().unwrap();
    assert_eq!(cells.len(), 24);
    let central: Vec<&serde_json::Value> = cells.iter().filter(|c| c["roi"] == "central").collect();
    assert_eq!(central.len(), 6);
    assert!(central.iter().all(|c| c["effect"] == false));
    assert_eq!(truth["effect_cells"].as_array().unwrap().len(), 4);
}

#[test]
fn a_study_of_more_than_98_dyads_has_three_digit_ids_and_keeps_its_structure() {
    let (_dir, out, study) = generated(&[
        "--dyads",
        "100",
        "--rois",
        "4",
        "--channels-per-roi",
        "1",
        "--sampling-hz",
        "1",
        "--block-s",
        "60",
        "--blocks-per-condition",
        "2",
    ]);
    assert_eq!(study.dyads.len(), 100);
    assert_eq!(study.members.len(), 200);
    let ids: Vec<&str> = study.dyads.iter().map(|d| d.id.as_str()).collect();
    let want: Vec<String> = (1..=100).map(|i| format!("t{i:03}")).collect();
    assert_eq!(ids, want);
    assert!(study.members.iter().all(|m| m.participant.len() == 5));
    for r in &study.recordings {
        assert_eq!(r.n, 770, "770 s at 1 Hz");
    }
    for c in &study.conditions {
        assert_eq!(c.blocks.len(), 2);
        assert!(c.blocks.iter().all(|b| b.length == 60));
    }
    let plan_dir = out.join("plan");
    let o = nevermet(&[
        "plan",
        out.join("study.toml").to_str().unwrap(),
        "--out",
        plan_dir.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let plan: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(plan_dir.join("plan.json")).unwrap())
            .unwrap();
    // Hand count, as for the committed demo but with 50 dyads per site: 100 × 100 = 10 000
    // candidates, 100 real, 2 × 50 × 50 = 5000 across sites, the two family cells of t001/t002
    // (also ever-partners through g1001) and the two of the twins' family at t051/t052:
    // 2 × (50 × 50 − 50 − 2) = 4896 admissible.
    assert_eq!(plan["candidates"], 10_000);
    assert_eq!(plan["real"], 100);
    assert_eq!(plan["excluded_by_rule"]["pair_within:site"], 5000);
    assert_eq!(plan["excluded_by_rule"]["keep_apart:family"], 4);
    assert_eq!(plan["excluded_by_rule"]["ever-partners"], 2);
    assert_eq!(plan["admissible_pairs"], 4896);
    let pairs = std::fs::read_to_string(plan_dir.join("pairs.tsv")).unwrap();
    assert!(
        pairs.contains(
            "t001:g1001\tt002:c2002\tt001\tt002\texcluded\tever-partners;keep_apart:family"
        ),
        "{}",
        &pairs[..pairs.len().min(2000)]
    );
    assert!(
        pairs.contains("t051:g1051\tt052:c2052\tt051\tt052\texcluded\tkeep_apart:family"),
        "the twins' family at the second site"
    );
}
