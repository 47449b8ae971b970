//! Partition of cells into correction families: cells that share the condition (or the
//! contrast) and the values of every axis NOT pooled by the configuration form one family.
//! Owns only the grouping; the tests and adjustments are elsewhere.

use std::collections::HashMap;

use super::types::{CellKey, FamilyAxis};

/// The values that separate families: the scope (condition or contrast name) and each
/// axis that is not pooled, `None` where it is pooled.
type FamilyKey = (String, Option<String>, Option<String>, Option<String>);

fn family_key(scope: &str, key: &CellKey, pooled: &[FamilyAxis]) -> FamilyKey {
    let keep = |axis: FamilyAxis, value: &str| (!pooled.contains(&axis)).then(|| value.to_owned());
    (
        scope.to_owned(),
        keep(FamilyAxis::Chromophore, &key.chromophore),
        keep(FamilyAxis::Band, &key.band),
        keep(FamilyAxis::Roi, &key.roi),
    )
}

/// Groups members into families. `members` yields (scope, cell key) per member; the result
/// lists member indices per family, families in order of first appearance and members in
/// input order, so the grouping is deterministic.
pub(crate) fn group<'a>(
    members: impl IntoIterator<Item = (&'a str, &'a CellKey)>,
    pooled: &[FamilyAxis],
) -> Vec<Vec<usize>> {
    let mut index: HashMap<FamilyKey, usize> = HashMap::new();
    let mut families: Vec<Vec<usize>> = Vec::new();
    for (i, (scope, key)) in members.into_iter().enumerate() {
        let fk = family_key(scope, key, pooled);
        let slot = *index.entry(fk).or_insert_with(|| {
            families.push(Vec::new());
            families.len() - 1
        });
        families[slot].push(i);
    }
    families
}

#[cfg(test)]
mod tests {
    use super::*;

    fn key(condition: &str, chromophore: &str, band: &str, roi: &str) -> CellKey {
        CellKey {
            condition: condition.into(),
            chromophore: chromophore.into(),
            band: band.into(),
            roi: roi.into(),
        }
    }

    #[test]
    fn pooling_band_and_roi_separates_condition_and_chromophore() {
        let keys = [
            key("talk", "hbo", "low", "pfc"),
            key("talk", "hbo", "high", "tpj"),
            key("talk", "hbr", "low", "pfc"),
            key("draw", "hbo", "low", "pfc"),
            key("talk", "hbr", "high", "pfc"),
        ];
        let fams = group(
            keys.iter().map(|k| (k.condition.as_str(), k)),
            &[FamilyAxis::Band, FamilyAxis::Roi],
        );
        assert_eq!(fams, vec![vec![0, 1], vec![2, 4], vec![3]]);
    }

    #[test]
    fn no_pooling_makes_singletons_and_full_pooling_one_per_condition() {
        let keys = [
            key("talk", "hbo", "low", "pfc"),
            key("talk", "hbr", "high", "tpj"),
        ];
        let single = group(keys.iter().map(|k| ("x", k)), &[]);
        assert_eq!(single, vec![vec![0], vec![1]]);
        let all = group(
            keys.iter().map(|k| ("x", k)),
            &[FamilyAxis::Band, FamilyAxis::Roi, FamilyAxis::Chromophore],
        );
        assert_eq!(all, vec![vec![0, 1]]);
    }
}
