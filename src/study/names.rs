//! Comparing names the way people misspell them: in case, or in the separators `.`, space,
//! `_` and `-`. Used to say which column a missing one probably is, and to refuse two
//! condition labels that can only be one condition written two ways.

use super::config::{edit_distance, nearest};

/// The name with case and the separators `.`, space, `_` and `-` removed.
pub fn normalize(name: &str) -> String {
    name.chars()
        .filter(|c| !matches!(c, '.' | ' ' | '_' | '-'))
        .flat_map(char::to_lowercase)
        .collect()
}

/// Two different labels that differ only in case, spaces, hyphens, underscores or dots.
pub fn same_label(a: &str, b: &str) -> bool {
    a != b && normalize(a) == normalize(b)
}

/// What a wanted name probably is among the names found.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Nearest<'a> {
    /// Equal but for case or separators.
    Spelling(&'a str),
    /// A few edits away.
    Close(&'a str),
}

/// The found name nearest to `wanted`: first one equal to it but for case and separators,
/// else the closest by edit distance on the normalized names, when close enough to be a typo.
pub fn nearest_name<'a>(wanted: &str, found: &'a [String]) -> Option<Nearest<'a>> {
    let norm = normalize(wanted);
    if let Some(f) = found.iter().find(|f| normalize(f) == norm) {
        return Some(Nearest::Spelling(f));
    }
    let normalized: Vec<String> = found.iter().map(|f| normalize(f)).collect();
    let refs: Vec<&str> = normalized.iter().map(String::as_str).collect();
    let best = nearest(&norm, &refs)?;
    let i = refs.iter().position(|r| *r == best)?;
    // A one- or two-letter name is "near" almost anything; say so only for a real typo.
    (edit_distance(&norm, best) < norm.len()).then(|| Nearest::Close(&found[i]))
}

/// "columns found: a, b, c" with at most `max` names, for hints.
pub fn found_list(found: &[String], max: usize) -> String {
    let shown: Vec<String> = found.iter().take(max).map(|f| format!("`{f}`")).collect();
    let more = if found.len() > max {
        format!(" and {} more", found.len() - max)
    } else {
        String::new()
    };
    format!("columns found: {}{more}", shown.join(", "))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(v: &[&str]) -> Vec<String> {
        v.iter().map(|s| s.to_string()).collect()
    }

    #[test]
    fn case_and_separators_do_not_make_a_new_name() {
        assert_eq!(normalize("S1-D1.HbO"), "s1d1hbo");
        assert!(same_label("Together", "together"));
        assert!(same_label("free play", "free_play"));
        assert!(same_label("free-play", "FreePlay"));
        assert!(!same_label("joint", "joint"));
        assert!(!same_label("joint", "parallel"));
    }

    #[test]
    fn the_nearest_found_name_is_named() {
        let found = names(&["Time(s)", "S1-D1.HbO", "S1-D1.HbR"]);
        assert_eq!(
            nearest_name("S1-D1.hbo", &found),
            Some(Nearest::Spelling("S1-D1.HbO"))
        );
        assert_eq!(
            nearest_name("time", &found),
            Some(Nearest::Close("Time(s)"))
        );
        let members = names(&["dyda", "role", "participant", "recording"]);
        assert_eq!(nearest_name("dyad", &members), Some(Nearest::Close("dyda")));
        assert_eq!(nearest_name("status", &members), None);
    }
}
