//! The tidy output tables: `results.tsv`, `contrasts.tsv`, `dyads.tsv` and `pairs.tsv`.
//! Long format, one row per observation, so a researcher loads each in one line of R or pandas.

use std::path::Path;

use crate::inference::{ContrastRow, DyadRow, ResultRow, TestKind};
use crate::pairing::{PairPlan, Status};
use crate::study::Study;
use crate::table::{Table, TableError, write_table};

/// `effect_size_kind` of the re-pairing test: (T − mean T*) / SD(T*), the observed statistic's
/// distance from its re-pairing distribution in null standard deviations.
pub const EFFECT_NULL_Z: &str = "null_z";
/// `effect_size_kind` of the dyad contrast and the condition contrasts: Cohen's d_z, the mean
/// paired difference over its standard deviation.
pub const EFFECT_D_Z: &str = "d_z";

/// What `effect_size` means in a row: each test has its own standardised effect, and the column
/// beside it says which, so no reader averages the two.
pub fn effect_size_kind(test: TestKind) -> &'static str {
    match test {
        TestKind::Repairing => EFFECT_NULL_Z,
        TestKind::DyadContrast => EFFECT_D_Z,
    }
}

pub fn results(rows: &[ResultRow], path: &Path) -> Result<(), TableError> {
    let t = Table::new()
        .text(
            "condition",
            rows.iter().map(|r| r.key.condition.clone()).collect(),
        )
        .text(
            "chromophore",
            rows.iter().map(|r| r.key.chromophore.clone()).collect(),
        )
        .text("band", rows.iter().map(|r| r.key.band.clone()).collect())
        .text("roi", rows.iter().map(|r| r.key.roi.clone()).collect())
        .text("test", rows.iter().map(|r| r.test.to_string()).collect())
        .int("n_dyads", rows.iter().map(|r| r.n_dyads as i64).collect())
        .int("n_pseudo", rows.iter().map(|r| r.n_pseudo as i64).collect())
        .float("real_mean", rows.iter().map(|r| r.real_mean).collect())
        .float("pseudo_mean", rows.iter().map(|r| r.pseudo_mean).collect())
        .float("excess", rows.iter().map(|r| r.excess).collect())
        .float("effect_size", rows.iter().map(|r| r.effect_size).collect())
        .text(
            "effect_size_kind",
            rows.iter()
                .map(|r| effect_size_kind(r.test).to_string())
                .collect(),
        )
        .float("ci_low", rows.iter().map(|r| r.ci_low).collect())
        .float("ci_high", rows.iter().map(|r| r.ci_high).collect())
        .float("statistic", rows.iter().map(|r| r.statistic).collect())
        .float("p", rows.iter().map(|r| r.p).collect())
        .float("p_signflip", rows.iter().map(|r| r.p_signflip).collect())
        .float("p_adj", rows.iter().map(|r| r.p_adj).collect())
        .text(
            "correction",
            rows.iter().map(|r| r.correction.to_string()).collect(),
        )
        .boolean("significant", rows.iter().map(|r| r.significant).collect())
        .boolean("testable", rows.iter().map(|r| r.testable).collect());
    write_table(&t, path)
}

pub fn contrasts(rows: &[ContrastRow], path: &Path) -> Result<(), TableError> {
    let t = Table::new()
        .text(
            "contrast",
            rows.iter().map(|r| r.contrast.clone()).collect(),
        )
        .text(
            "condition_a",
            rows.iter().map(|r| r.condition_a.clone()).collect(),
        )
        .text(
            "condition_b",
            rows.iter().map(|r| r.condition_b.clone()).collect(),
        )
        .text(
            "chromophore",
            rows.iter().map(|r| r.chromophore.clone()).collect(),
        )
        .text("band", rows.iter().map(|r| r.band.clone()).collect())
        .text("roi", rows.iter().map(|r| r.roi.clone()).collect())
        .int("n_dyads", rows.iter().map(|r| r.n_dyads as i64).collect())
        .float(
            "mean_difference",
            rows.iter().map(|r| r.mean_difference).collect(),
        )
        .float("effect_size", rows.iter().map(|r| r.effect_size).collect())
        .text(
            "effect_size_kind",
            rows.iter().map(|_| EFFECT_D_Z.to_string()).collect(),
        )
        .float("ci_low", rows.iter().map(|r| r.ci_low).collect())
        .float("ci_high", rows.iter().map(|r| r.ci_high).collect())
        .float("statistic", rows.iter().map(|r| r.statistic).collect())
        .float("df", rows.iter().map(|r| r.df).collect())
        .float("p", rows.iter().map(|r| r.p).collect())
        .float("p_signflip", rows.iter().map(|r| r.p_signflip).collect())
        .float("p_adj", rows.iter().map(|r| r.p_adj).collect())
        .text(
            "correction",
            rows.iter().map(|r| r.correction.to_string()).collect(),
        )
        .boolean("significant", rows.iter().map(|r| r.significant).collect());
    write_table(&t, path)
}

pub fn dyads(rows: &[DyadRow], path: &Path) -> Result<(), TableError> {
    let t = Table::new()
        .text("dyad", rows.iter().map(|r| r.dyad.clone()).collect())
        .text(
            "condition",
            rows.iter().map(|r| r.key.condition.clone()).collect(),
        )
        .text(
            "chromophore",
            rows.iter().map(|r| r.key.chromophore.clone()).collect(),
        )
        .text("band", rows.iter().map(|r| r.key.band.clone()).collect())
        .text("roi", rows.iter().map(|r| r.key.roi.clone()).collect())
        .float("real", rows.iter().map(|r| r.real).collect())
        .float("pseudo_mean", rows.iter().map(|r| r.pseudo_mean).collect())
        .int("n_pseudo", rows.iter().map(|r| r.n_pseudo as i64).collect());
    write_table(&t, path)
}

/// Every candidate pair with its status and, when excluded, every rule that excludes it.
pub fn pairs(study: &Study, plan: &PairPlan, path: &Path) -> Result<(), TableError> {
    let mut a = Vec::new();
    let mut b = Vec::new();
    let mut da = Vec::new();
    let mut db = Vec::new();
    let mut status = Vec::new();
    let mut reason = Vec::new();
    for (r, c, s) in plan.candidates() {
        let (ma, mb) = (
            &study.members[plan.grid.row_member(r).0],
            &study.members[plan.grid.col_member(c).0],
        );
        a.push(ma.id.clone());
        b.push(mb.id.clone());
        da.push(study.dyads[ma.dyad].id.clone());
        db.push(study.dyads[mb.dyad].id.clone());
        let (st, why) = match s {
            Status::Real => ("real", String::new()),
            Status::Admissible => ("admissible", String::new()),
            Status::Excluded(reasons) => (
                "excluded",
                reasons
                    .iter()
                    .map(ToString::to_string)
                    .collect::<Vec<_>>()
                    .join(";"),
            ),
        };
        status.push(st.to_string());
        reason.push(why);
    }
    let t = Table::new()
        .text("member_a", a)
        .text("member_b", b)
        .text("dyad_a", da)
        .text("dyad_b", db)
        .text("status", status)
        .text("reason", reason);
    write_table(&t, path)
}
