//! "Did you mean": the known name closest to a misspelt one, for the help
//! text of an input error (unknown keys, rule names, references, units).
//!
//! Closeness is the Damerau-Levenshtein distance (insertions, deletions,
//! substitutions and swaps of neighbours; `strsim`) between the lowercased
//! words. A name is suggested only when it is close enough to be a typo: at
//! most one edit, or at most a third of the longer word's letters (a
//! normalised similarity of 2/3 or more), and fewer edits than the shorter
//! word has letters. When two names with different meanings are equally
//! close, nothing is suggested: a guess between them would mislead.

/// A candidate: how it is spelt, and what it means (two spellings of one
/// thing, such as `um` and `µm`, are not a tie; nor is one name given
/// twice).
pub struct Candidate<'a> {
    pub spelling: &'a str,
    pub meaning: usize,
}

/// The closest candidate to `word`, if it is close enough and not tied
/// with a candidate of another meaning.
pub fn closest_meaning<'a>(
    word: &str,
    candidates: impl IntoIterator<Item = Candidate<'a>>,
) -> Option<&'a str> {
    let w = word.to_lowercase();
    let wlen = w.chars().count();
    let mut best: Option<(usize, Candidate<'a>)> = None;
    let mut tied = false;
    for c in candidates {
        let lower = c.spelling.to_lowercase();
        if lower == w && c.spelling == word {
            // The word itself is not a suggestion.
            continue;
        }
        let d = strsim::damerau_levenshtein(&w, &lower);
        let clen = lower.chars().count();
        let close = (d <= 1 || 3 * d <= wlen.max(clen)) && d < wlen.min(clen);
        if !close {
            continue;
        }
        match &best {
            Some((bd, _)) if d > *bd => {}
            Some((bd, b)) if d == *bd => {
                tied |= b.meaning != c.meaning && b.spelling != c.spelling;
            }
            _ => {
                best = Some((d, c));
                tied = false;
            }
        }
    }
    best.filter(|_| !tied).map(|(_, c)| c.spelling)
}

/// The closest of `names` (each its own meaning) to `word`.
pub fn closest<'a>(word: &str, names: impl IntoIterator<Item = &'a str>) -> Option<&'a str> {
    closest_meaning(
        word,
        names
            .into_iter()
            .enumerate()
            .map(|(meaning, spelling)| Candidate { spelling, meaning }),
    )
}

/// Keys people write by habit for one of ours, with the key they mean: too
/// far apart for the edit distance, common enough to be worth a table.
/// Used only where the key meant is allowed.
const KEY_ALIASES: &[(&str, &str)] = &[
    ("diff-spacing", "spacing"),
    ("differential-spacing", "spacing"),
    ("pair-spacing", "spacing"),
    ("pair-gap", "spacing"),
    ("trace-width", "width"),
    ("line-width", "width"),
    ("er", "dk"),
    ("permittivity", "dk"),
    ("dielectric-constant", "dk"),
    ("loss-tangent", "df"),
    ("tan-delta", "df"),
    ("dissipation-factor", "df"),
];

/// The allowed key meant by a misspelt or habitual one.
pub fn key<'a>(written: &str, allowed: &[&'a str]) -> Option<&'a str> {
    let lower = written.to_lowercase();
    KEY_ALIASES
        .iter()
        .filter(|(alias, _)| *alias == lower)
        .find_map(|(_, meant)| allowed.iter().find(|a| *a == meant).copied())
        .or_else(|| closest(written, allowed.iter().copied()))
}

/// The help text that proposes `fix`.
pub fn did_you_mean(fix: &str) -> String {
    format!("did you mean `{fix}`?")
}

/// The help for an unknown name: the closest known one if there is one,
/// else `otherwise` (typically the list of known names).
pub fn help_for<'a>(
    written: &str,
    known: impl IntoIterator<Item = &'a str>,
    otherwise: impl FnOnce() -> String,
) -> String {
    match closest(written, known) {
        Some(fix) => did_you_mean(fix),
        None => otherwise(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn typos_are_caught_and_strangers_are_not() {
        let keys = ["kind", "thickness", "material"];
        assert_eq!(closest("thicknes", keys), Some("thickness"));
        assert_eq!(closest("thikcness", keys), Some("thickness")); // a swap is one edit
        assert_eq!(closest("Material", keys), Some("material"));
        assert_eq!(closest("colour", ["role", "plated", "fill"]), None);
        assert_eq!(
            closest("platted", ["role", "plated", "fill"]),
            Some("plated")
        );
        // One edit in a short name is still a typo...
        assert_eq!(closest("fr5", ["fr4", "low-loss-core"]), Some("fr4"));
        // ...unless another name is as close.
        assert_eq!(closest("L7", ["L1", "L2", "L3"]), None);
        assert_eq!(closest("x", ["y"]), None);
        // The word itself is no suggestion.
        assert_eq!(closest("fr4", ["fr4"]), None);
    }

    #[test]
    fn spellings_of_one_meaning_are_no_tie() {
        let c = |spelling, meaning| Candidate { spelling, meaning };
        let units = [c("ohm", 0), c("ohms", 0), c("mohm", 1)];
        assert_eq!(closest_meaning("ohmm", units), Some("ohm"));
        let units = [c("um", 0), c("mm", 1)];
        assert_eq!(closest_meaning("umm", units), None);
    }

    #[test]
    fn habitual_keys_map_where_allowed() {
        let pair = ["name", "width", "spacing", "gap"];
        assert_eq!(key("diff-spacing", &pair), Some("spacing"));
        assert_eq!(key("spacng", &pair), Some("spacing"));
        // `dk` is not a key of a net class: no alias there.
        assert_eq!(key("er", &pair), None);
    }
}
