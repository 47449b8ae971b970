//! The methods paragraph: a plain-text description of one analysis, generated from its
//! settings and counts so that it can be pasted into a paper unchanged.
//!
//! Owns wording only; every value comes from `MethodsInput`. Returns plain text (no markup):
//! the page escapes it. Must not compute statistics or look anything up.

use super::data::MethodsInput;
use crate::human;

/// Shortest decimal form of a setting (`6`, `0.05`, `12.5`): the value as the user wrote it.
fn plain(x: f64) -> String {
    format!("{x}")
}

/// "a", "a and b", "a, b and c".
fn join(items: &[String]) -> String {
    match items {
        [] => String::new(),
        [one] => one.clone(),
        [init @ .., last] => format!("{} and {last}", init.join(", ")),
    }
}

fn plural(n: usize, one: &str, many: &str) -> String {
    format!("{n} {}", if n == 1 { one } else { many })
}

fn measure_sentences(m: &MethodsInput) -> Vec<String> {
    let bands: Vec<String> = m
        .bands
        .iter()
        .map(|(name, lo, hi)| format!("\"{name}\" ({}–{} s)", plain(*lo), plain(*hi)))
        .collect();
    match m.measure.as_str() {
        "wtc" => {
            let mut s = vec![format!(
                "Interpersonal synchrony was quantified as wavelet transform coherence (WTC; \
                 Grinsted et al. 2004) between the two members' signals: continuous wavelet \
                 transforms used a Morlet wavelet with ω0 = {} at {} scales per octave \
                 (Torrence & Compo 1998), and the auto- and cross-spectra were smoothed in \
                 time (Gaussian) and scale (boxcar of 0.6 octave) before forming the \
                 coherence (Torrence & Webster 1999; Grinsted et al. 2004).",
                plain(m.omega0),
                m.scales_per_octave
            )];
            if m.coarse_grid {
                s.push(
                    "Smoothed spectra were evaluated on a time grid coarsened to each scale \
                     (transform values at most half a scale apart, exact at those instants; \
                     time smoothing by quadrature; averages over time by Simpson's rule), \
                     which keeps block-mean coherence within 10⁻³ of the every-sample \
                     computation."
                        .to_owned(),
                );
            }
            if !bands.is_empty() {
                s.push(format!(
                    "Coherence was averaged over the time–period points outside the cone of \
                     influence within the period {} {}.",
                    if bands.len() == 1 { "band" } else { "bands" },
                    join(&bands)
                ));
            }
            s
        }
        "corr" => vec![
            "Interpersonal synchrony was quantified as the Pearson correlation r between \
             the two members' signals over each analysis window; correlations were averaged \
             across channels and blocks on Fisher's z = artanh(r) scale and transformed \
             back to r. Correlation does not resolve periods, so no period band applies."
                .to_owned(),
        ],
        other => vec![format!(
            "Interpersonal synchrony was quantified by the measure \"{other}\"."
        )],
    }
}

/// One condition's block lengths: equal lengths once, a short list in block order, or the
/// range when the list would be long.
fn blocks(condition: &str, lengths: &[f64]) -> String {
    let n = lengths.len();
    if n == 0 {
        return format!("\"{condition}\" no analysed blocks");
    }
    // Lengths are sample counts times the sampling interval: written as a paper writes
    // seconds, so 60.000000000000014 s reads 60 s and equal blocks are said once.
    let first = human::seconds(lengths[0]);
    if lengths.iter().all(|&l| human::seconds(l) == first) {
        let each = if n == 1 { "" } else { " each" };
        return format!(
            "\"{condition}\" {} of {first} s{each}",
            plural(n, "block", "blocks"),
        );
    }
    if n <= 8 {
        let list: Vec<String> = lengths.iter().map(|l| human::seconds(*l)).collect();
        return format!("\"{condition}\" {n} blocks of {} s", join(&list));
    }
    let lo = lengths.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = lengths.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    format!(
        "\"{condition}\" {n} blocks of {}–{} s",
        human::seconds(lo),
        human::seconds(hi)
    )
}

fn window_sentence(m: &MethodsInput) -> String {
    let parts: Vec<String> = m.block_lengths.iter().map(|(c, l)| blocks(c, l)).collect();
    let listed = if parts.is_empty() {
        String::new()
    } else {
        format!(" ({})", parts.join("; "))
    };
    format!(
        "Each block was analysed in one study-wide window, the same length in every dyad (the \
         shortest duration of that block across dyads){listed}, with {} s of recording kept \
         as context on each side so that real pairs and pseudo-pairs were computed on \
         identical windows.",
        human::seconds(m.context_s)
    )
}

/// What the study's allowances let through, said in the paper's own words.
fn allowance_sentence(m: &MethodsInput) -> Option<String> {
    if m.allowances.is_empty() {
        return None;
    }
    Some(format!(
        "The study configuration explicitly allowed incomplete or unequal blocks: {}.",
        m.allowances.join("; ")
    ))
}

fn signal_sentence(m: &MethodsInput) -> String {
    let chromophores = if m.chromophores.is_empty() {
        "the recorded chromophore".to_owned()
    } else {
        join(&m.chromophores)
    };
    let pairing = match m.channel_pairs.as_str() {
        "same" => {
            "each channel of one member was paired with the same channel of the other".to_owned()
        }
        "all" => "every channel of one member was paired with every channel of the other, \
                  and channel pairs were pooled per pair of ROIs"
            .to_owned(),
        other => format!("channels were paired as \"{other}\""),
    };
    format!(
        "Synchrony was computed for {chromophores}; {pairing}. Channel values were averaged \
         within regions of interest (ROIs) over the channels good in both members, and a \
         ROI value was treated as missing when fewer than {} were.",
        plural(m.min_channels_per_roi, "channel", "channels")
    )
}

fn rule_phrase(name: &str, n: usize) -> String {
    let what = match name {
        "same-participant" => "the same participant on both sides".to_owned(),
        "ever-partners" => "two persons recorded together in any real dyad".to_owned(),
        _ => {
            if let Some(a) = name.strip_prefix("keep_apart:") {
                format!("members sharing a value of {a}")
            } else if let Some(a) = name.strip_prefix("pair_within:") {
                format!("members with different or missing values of {a}")
            } else {
                format!("the rule {name}")
            }
        }
    };
    format!("{what} ({name}: {})", plural(n, "candidate", "candidates"))
}

fn pairing_sentences(m: &MethodsInput) -> Vec<String> {
    let mut s = Vec::new();
    let study = format!(
        "The sample comprised {} ({}).",
        plural(m.n_dyads, "dyad", "dyads"),
        plural(m.n_members, "member", "members")
    );
    s.push(study);
    match (m.mode.as_str(), m.roles.as_slice()) {
        ("roles", [a, b]) => s.push(format!(
            "Members had fixed roles ({a} and {b}; roles mode): a pseudo-pair joined the {a} \
             of one dyad with the {b} of another, so that every pair kept one member of each \
             role."
        )),
        ("peers", _) => s.push(
            "Members were interchangeable (peers mode): a pseudo-pair joined any two members \
             of different dyads."
                .to_owned(),
        ),
        (mode, roles) => s.push(format!(
            "Pseudo-pairs were formed in {mode} mode{}.",
            if roles.is_empty() {
                String::new()
            } else {
                format!(" with roles {}", join(roles))
            }
        )),
    }
    let mut constraints = Vec::new();
    if !m.keep_apart.is_empty() {
        constraints.push(format!(
            "members sharing a value of {} were never paired",
            join(&m.keep_apart)
        ));
    }
    if !m.pair_within.is_empty() {
        constraints.push(format!(
            "pseudo-pairs were formed only between members with the same {}",
            join(&m.pair_within)
        ));
    }
    if !constraints.is_empty() {
        let mut c = join(&constraints);
        if let Some(first) = c.get(..1) {
            c = first.to_uppercase() + &c[1..];
        }
        s.push(format!("{c}."));
    }
    let rules: Vec<String> = m
        .excluded_by_rule
        .iter()
        .map(|(name, n)| rule_phrase(name, *n))
        .collect();
    let excluded = if rules.is_empty() {
        String::new()
    } else {
        format!(
            "; candidate pairs were excluded for joining {} (a candidate may fall under \
             several rules)",
            join(&rules)
        )
    };
    s.push(format!(
        "Besides the real pairs, {} remained admissible{excluded}.",
        plural(m.admissible_pairs, "pseudo-pair", "pseudo-pairs")
    ));
    s
}

/// Measured size of the approximate reference set, quoted in the methods paragraph (project
/// simulations: whole synthetic null studies, `tests/calibration.rs` and the calibrate example).
pub const PSEUDO_ONLY_CALIBRATION: &str = "in simulated null studies of 8 to 12 dyads at \
     α = 0.05 it rejected at 0.08–0.12 in one cell and 0.13–0.23 family-wise, against \
     0.04–0.06 and 0.05–0.07 with every re-pairing as the reference set";

fn null_sentences(m: &MethodsInput) -> Vec<String> {
    let mut s = vec![
        "The test statistic T of a cell was the mean synchrony over the real pairs.".to_string(),
    ];
    if m.pseudo_only {
        s.push(format!(
            "It was compared with re-pairings made of pseudo-pairs only, assignments of every \
             member to an admissible pseudo-partner, of which the study admitted {}. Because \
             this reference set does not contain the observed pairing, the test is \
             approximate and rejects too often when members are re-paired in small pools \
             ({PSEUDO_ONLY_CALIBRATION}).",
            m.repairings_count
        ));
    } else {
        s.push(format!(
            "Under the null hypothesis that synchrony does not depend on who was recorded \
             with whom, the observed pairing is exchangeable with every re-pairing: every \
             assignment of partners in which each pair is real or admissible, the observed \
             pairing among them; the study admitted {} re-pairings. A real pair kept by a \
             re-pairing entered T* with its own value; real pairs never entered the \
             pseudo-pair means.",
            m.repairings_count
        ));
    }
    if m.repairings_exact {
        s.push(format!(
            "The null distribution of T was obtained exactly, by enumerating all {} \
             re-pairings of the reference set and computing the statistic T* for each.",
            m.repairings_count
        ));
    } else {
        s.push(format!(
            "The null distribution of T was estimated from K = {} re-pairings drawn uniformly \
             from the reference set (sampler: {}), the same draws for every cell, with the \
             statistic T* computed for each.",
            m.permutations, m.sampler
        ));
    }
    let direction = match m.alternative.as_str() {
        "greater" => "one-sided (greater: real pairs more synchronous than pseudo-pairs), \
                      counting re-pairings with T* ≥ T"
            .to_owned(),
        "two-sided" => {
            "two-sided, counting re-pairings with |T* − mean T*| ≥ |T − mean T*|".to_owned()
        }
        other => other.to_owned(),
    };
    let rank = if m.repairings_exact && !m.pseudo_only {
        "; K counted the re-pairings other than the observed one, so p was the rank of T among \
         all re-pairings"
    } else {
        ""
    };
    s.push(format!(
        "p-values were {direction}, as p = (b + 1)/(K + 1) with b such re-pairings among K \
         (Phipson & Smyth 2010){rank}."
    ));
    s
}

fn correction_phrase(name: &str) -> String {
    match name {
        "maxstat" => "the single-step max-statistic adjustment over the shared re-pairings \
                      (Westfall & Young 1993; Nichols & Holmes 2002)"
            .to_owned(),
        "holm" => "Holm's step-down procedure (Holm 1979)".to_owned(),
        "bh" => "the Benjamini–Hochberg false discovery rate procedure (Benjamini & \
                 Hochberg 1995)"
            .to_owned(),
        "by" => "the Benjamini–Yekutieli false discovery rate procedure for arbitrary \
                 dependence (Benjamini & Yekutieli 2001)"
            .to_owned(),
        "bonferroni" => "the Bonferroni correction".to_owned(),
        other => format!("the {other} correction"),
    }
}

fn inference_sentences(m: &MethodsInput) -> Vec<String> {
    let mut s = Vec::new();
    if m.correction == "none" {
        s.push(format!(
            "p-values were not adjusted for multiple comparisons (correction: none); cells \
             with p < α = {} were called significant.",
            plain(m.alpha)
        ));
    } else {
        let family = if m.family.is_empty() {
            "each family held the cells of one condition (or contrast) that share \
             chromophore, band and ROI, no axis being pooled"
                .to_owned()
        } else {
            format!(
                "a family comprised the cells of one condition (or contrast) across {}",
                join(&m.family)
            )
        };
        s.push(format!(
            "Multiplicity was controlled by {} (correction: {}) within families, where \
             {family}; cells with an adjusted p < α = {} were called significant.",
            correction_phrase(&m.correction),
            m.correction,
            plain(m.alpha)
        ));
    }
    if m.bootstrap > 0 {
        s.push(format!(
            "Two-sided (1 − α) percentile bootstrap confidence intervals for the excess of \
             real over pseudo-pair synchrony were computed from {} resamples of dyads \
             (Efron & Tibshirani 1993).",
            m.bootstrap
        ));
    } else {
        s.push("No bootstrap confidence intervals were computed.".to_owned());
    }
    s.push(format!(
        "All random draws were derived from seed {}, so the analysis is reproducible \
         exactly. Analyses were run with nevermet {}.",
        m.seed, m.tool_version
    ));
    s
}

/// The methods paragraph for `m`, as one block of plain text.
pub fn paragraph(m: &MethodsInput) -> String {
    let mut s = measure_sentences(m);
    s.push(window_sentence(m));
    s.extend(allowance_sentence(m));
    s.push(signal_sentence(m));
    s.extend(pairing_sentences(m));
    s.extend(null_sentences(m));
    s.extend(inference_sentences(m));
    s.join(" ")
}

#[cfg(test)]
mod tests {
    use super::*;

    fn input() -> MethodsInput {
        MethodsInput {
            tool_version: "9.8.7".into(),
            measure: "wtc".into(),
            omega0: 6.0,
            scales_per_octave: 12,
            bands: vec![("slow".into(), 10.0, 30.0), ("fast".into(), 3.5, 9.0)],
            chromophores: vec!["hbo".into(), "hbr".into()],
            channel_pairs: "same".into(),
            min_channels_per_roi: 3,
            context_s: 45.0,
            coarse_grid: true,
            block_lengths: vec![
                ("task".into(), vec![30.0, 30.0, 30.0]),
                ("rest".into(), vec![28.5, 31.25]),
            ],
            mode: "roles".into(),
            roles: vec!["caregiver".into(), "child".into()],
            keep_apart: vec!["household".into()],
            pair_within: vec!["site".into()],
            n_dyads: 24,
            n_members: 48,
            admissible_pairs: 517,
            excluded_by_rule: vec![
                ("same-participant".into(), 2),
                ("ever-partners".into(), 5),
                ("keep_apart:household".into(), 11),
                ("pair_within:site".into(), 37),
            ],
            repairings_count: "123456789012345678901234567890".into(),
            repairings_exact: false,
            pseudo_only: false,
            permutations: 4999,
            sampler: "rejection sampling of uniform re-pairings within strata".into(),
            correction: "holm".into(),
            family: vec!["band".into(), "roi".into()],
            alpha: 0.025,
            alternative: "greater".into(),
            bootstrap: 1999,
            seed: 20261201,
            allowances: vec![],
        }
    }

    // Every input value must appear in the text (the values are chosen to be distinctive, so
    // a match cannot come from elsewhere in the paragraph).
    #[test]
    fn mentions_every_input_value() {
        let m = input();
        let p = paragraph(&m);
        for needle in [
            "nevermet 9.8.7",
            "wavelet transform coherence",
            "ω0 = 6",
            "12 scales per octave",
            "Grinsted et al. 2004",
            "cone of influence",
            "\"slow\" (10–30 s)",
            "\"fast\" (3.5–9 s)",
            "hbo and hbr",
            "same channel",
            "fewer than 3 channels",
            "45 s",
            "\"task\" 3 blocks of 30 s each",
            "\"rest\" 2 blocks of 28.5 and 31.25 s",
            "roles mode",
            "caregiver",
            "child",
            "household",
            "same site",
            "24 dyads",
            "48 members",
            "517 pseudo-pairs",
            "same-participant: 2 candidates",
            "ever-partners: 5 candidates",
            "keep_apart:household: 11 candidates",
            "pair_within:site: 37 candidates",
            "123456789012345678901234567890 re-pairings",
            "K = 4999",
            "rejection sampling of uniform re-pairings within strata",
            "Phipson & Smyth 2010",
            "Holm 1979",
            "correction: holm",
            "band and roi",
            "α = 0.025",
            "greater",
            "1999 resamples",
            "seed 20261201",
        ] {
            assert!(p.contains(needle), "missing {needle:?} in:\n{p}");
        }
        // Plain text: a `<` may only be the less-than sign, never the start of a tag.
        let tag = p
            .as_bytes()
            .windows(2)
            .any(|w| w[0] == b'<' && (w[1].is_ascii_alphabetic() || w[1] == b'/'));
        assert!(!tag, "markup in plain text");
    }

    #[test]
    fn exact_enumeration_and_correlation_variants() {
        let mut m = input();
        m.repairings_exact = true;
        m.repairings_count = "720".into();
        m.measure = "corr".into();
        m.mode = "peers".into();
        m.roles.clear();
        m.correction = "maxstat".into();
        m.family.clear();
        m.alternative = "two-sided".into();
        m.channel_pairs = "all".into();
        m.bootstrap = 0;
        let p = paragraph(&m);
        for needle in [
            "enumerating all 720 re-pairings of the reference set",
            "Pearson correlation",
            "Fisher's z",
            "peers mode",
            "Westfall & Young 1993",
            "no axis being pooled",
            "two-sided",
            "every channel of one member",
            "No bootstrap",
        ] {
            assert!(p.contains(needle), "missing {needle:?} in:\n{p}");
        }
        // Wavelet settings do not apply to correlation and must not be claimed.
        assert!(!p.contains("ω0") && !p.contains("Morlet") && !p.contains("\"slow\""));
        assert!(!p.contains("K = 4999"));
    }

    #[test]
    fn every_correction_is_described() {
        for (name, cite) in [
            ("bh", "Benjamini & Hochberg 1995"),
            ("by", "Benjamini & Yekutieli 2001"),
            ("bonferroni", "Bonferroni"),
            ("none", "not adjusted"),
        ] {
            let mut m = input();
            m.correction = name.into();
            assert!(paragraph(&m).contains(cite), "{name}");
        }
    }

    /// Lengths computed as samples × interval carry binary-float tails; a paper writes 60 s.
    #[test]
    fn block_lengths_are_written_as_a_paper_writes_them() {
        let mut m = input();
        m.block_lengths = vec![(
            "together".into(),
            vec![60.000000000000014, 59.99999999999999],
        )];
        m.context_s = 66.00000000000001;
        let p = paragraph(&m);
        assert!(p.contains("\"together\" 2 blocks of 60 s each"), "{p}");
        assert!(p.contains("with 66 s of recording kept"), "{p}");
        assert!(!p.contains("000000"), "{p}");
        assert!(!p.contains("explicitly allowed"), "{p}");
        m.allowances = vec!["dyad n03 has 1 of the 2 blocks of \"together\"".into()];
        let p = paragraph(&m);
        assert!(
            p.contains("explicitly allowed incomplete or unequal blocks: dyad n03 has 1 of the 2 blocks of \"together\"."),
            "{p}"
        );
    }

    #[test]
    fn long_block_lists_become_a_range() {
        let lengths: Vec<f64> = (0..10).map(|i| 20.0 + f64::from(i)).collect();
        assert_eq!(blocks("c", &lengths), "\"c\" 10 blocks of 20–29 s");
        assert_eq!(blocks("c", &[12.0]), "\"c\" 1 block of 12 s");
        assert_eq!(join(&["a".into(), "b".into(), "c".into()]), "a, b and c");
    }
}
