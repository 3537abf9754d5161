//! A claim under review (SPEC §10): a statement from a release note, model card or
//! review deck, written down as one row of a claims file. Ingest produces these; the
//! audit joins them to the runs and decides them (`audit/claims.rs`).

use serde::{Deserialize, Serialize};

/// What a claim says, with E the true error and v its value.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ClaimKind {
    /// 1 − E ≥ v.
    Accuracy,
    /// E ≤ v.
    Error,
    /// E − E_in ≤ v: the generalization gap.
    Gap,
    /// E_run − E_baseline ≤ −v (v ≥ 0; v = 0: "more accurate").
    Beats,
    /// E_run − E_baseline ≤ v (v ≥ 0: a non-inferiority margin).
    NotWorse,
}

impl ClaimKind {
    pub const ALL: [ClaimKind; 5] = [
        ClaimKind::Accuracy,
        ClaimKind::Error,
        ClaimKind::Gap,
        ClaimKind::Beats,
        ClaimKind::NotWorse,
    ];

    pub fn as_str(self) -> &'static str {
        match self {
            ClaimKind::Accuracy => "accuracy",
            ClaimKind::Error => "error",
            ClaimKind::Gap => "gap",
            ClaimKind::Beats => "beats",
            ClaimKind::NotWorse => "not_worse",
        }
    }

    pub fn parse(text: &str) -> Option<ClaimKind> {
        let text = text.trim().to_ascii_lowercase().replace('-', "_");
        ClaimKind::ALL.into_iter().find(|k| k.as_str() == text)
    }

    /// Whether the claim compares a run with a baseline.
    pub fn compares(self) -> bool {
        matches!(self, ClaimKind::Beats | ClaimKind::NotWorse)
    }
}

/// One validated row of a claims file.
#[derive(Clone, Debug, PartialEq)]
pub struct ClaimInput {
    /// The claim's identifier (default `file:row`).
    pub claim: String,
    /// `file:row` of the claims file.
    pub source: String,
    /// The claims file and the 1-based row, for problems found when the claim is
    /// joined to the runs.
    pub file: String,
    pub row: usize,
    /// The sentence as published.
    pub statement: Option<String>,
    pub kind: ClaimKind,
    /// An exact run identifier, or a pattern with `*` and `?`.
    pub run: String,
    /// The run compared with (`beats`, `not_worse`), exact.
    pub baseline: Option<String>,
    /// The number in the claim, as a fraction.
    pub value: f64,
    /// Held-out examples only the run got wrong, and only the baseline got wrong.
    pub run_only_errors: Option<u64>,
    pub baseline_only_errors: Option<u64>,
}

impl ClaimInput {
    /// Whether `run` is a pattern (holds `*` or `?`) rather than an identifier.
    pub fn is_pattern(&self) -> bool {
        self.run.contains(['*', '?'])
    }
}

/// Whether `name` matches `pattern`, where `*` stands for any run of characters
/// (none included) and `?` for exactly one; every other character stands for itself.
pub fn matches_pattern(pattern: &str, name: &str) -> bool {
    glob_match(pattern, name)
}

/// [`matches_pattern`] without allocating: iterative matching with the last `*`
/// remembered (linear in practice, never exponential), stepping through both texts
/// by character with byte offsets.
fn glob_match(pattern: &str, name: &str) -> bool {
    let (mut p, mut n) = (0, 0);
    let mut star: Option<(usize, usize)> = None;
    while n < name.len() {
        let name_char = name[n..].chars().next().unwrap_or_default();
        let pattern_char = pattern[p..].chars().next();
        match pattern_char {
            Some(c) if c == '?' || c == name_char => {
                p += c.len_utf8();
                n += name_char.len_utf8();
            }
            Some('*') => {
                star = Some((p, n));
                p += 1;
            }
            _ => match star {
                Some((star_p, star_n)) => {
                    // The last `*` takes one more character of the name.
                    let taken = name[star_n..].chars().next().map_or(1, char::len_utf8);
                    p = star_p + 1;
                    n = star_n + taken;
                    star = Some((star_p, star_n + taken));
                }
                None => return false,
            },
        }
    }
    pattern[p..].chars().all(|c| c == '*')
}

/// Many patterns, indexed by their literal prefix (the characters before the first
/// `*` or `?`): an identifier is tested only against the patterns whose prefix it
/// starts with, found by one hash look-up per distinct prefix length, so 1,000
/// patterns cost a few look-ups per run, not 1,000 matches.
#[derive(Clone, Debug, Default)]
pub struct PatternIndex {
    /// Pattern indices by literal prefix.
    by_prefix: foldhash::HashMap<String, Vec<usize>>,
    /// The distinct prefix lengths in bytes, shortest first.
    lengths: Vec<usize>,
    patterns: Vec<String>,
}

impl PatternIndex {
    pub fn new<S: AsRef<str>>(patterns: &[S]) -> PatternIndex {
        let mut index = PatternIndex::default();
        for (at, pattern) in patterns.iter().enumerate() {
            let pattern = pattern.as_ref();
            let literal = pattern.find(['*', '?']).unwrap_or(pattern.len());
            let prefix = &pattern[..literal];
            index
                .by_prefix
                .entry(prefix.to_string())
                .or_default()
                .push(at);
            index.patterns.push(pattern.to_string());
        }
        let mut lengths: Vec<usize> = index.by_prefix.keys().map(String::len).collect();
        lengths.sort_unstable();
        lengths.dedup();
        index.lengths = lengths;
        index
    }

    pub fn is_empty(&self) -> bool {
        self.patterns.is_empty()
    }

    /// Calls `found` with the index of every pattern `name` matches (in no set order).
    pub fn for_each_match(&self, name: &str, mut found: impl FnMut(usize)) {
        for &length in &self.lengths {
            if length > name.len() {
                break;
            }
            if !name.is_char_boundary(length) {
                continue;
            }
            if let Some(candidates) = self.by_prefix.get(&name[..length]) {
                for &at in candidates {
                    if glob_match(&self.patterns[at], name) {
                        found(at);
                    }
                }
            }
        }
    }

    /// Whether `name` matches any of the patterns.
    pub fn matches_any(&self, name: &str) -> bool {
        let mut any = false;
        self.for_each_match(name, |_| any = true);
        any
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn patterns_match_like_shell_globs() {
        assert!(matches_pattern("region-*", "region-north"));
        assert!(matches_pattern("region-*", "region-"));
        assert!(!matches_pattern("region-*", "regions-north"));
        assert!(matches_pattern("v?-night", "v3-night"));
        assert!(!matches_pattern("v?-night", "v10-night"));
        assert!(matches_pattern("*night*", "v3-night-slice"));
        assert!(matches_pattern("a*b*c", "axxbyyc"));
        assert!(!matches_pattern("a*b*c", "axxbyy"));
        assert!(matches_pattern("*", ""));
        assert!(matches_pattern("exact", "exact"));
        assert!(!matches_pattern("exact", "exactly"));
        // Characters beyond ASCII are one character each, for `?` too.
        assert!(!matches_pattern("r?gion-é*", "ré併gion-éé"));
        assert!(matches_pattern("r?gion-é*", "région-éé"));
        assert!(matches_pattern("*é", "aé"));
        assert!(!matches_pattern("??", "é"));
        assert!(matches_pattern("?", "é"));
    }

    /// The index finds exactly the patterns a plain scan finds (random names and
    /// patterns over a small alphabet, with non-ASCII characters).
    #[test]
    fn the_index_finds_what_a_scan_finds() {
        let alphabet = ['a', 'b', '-', 'é', '*', '?'];
        let mut seed: u64 = 20261206;
        let mut next = |n: usize| {
            seed = seed
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            ((seed >> 33) as usize) % n
        };
        let word = |stars: bool, next: &mut dyn FnMut(usize) -> usize| {
            let len = next(6);
            (0..len)
                .map(|_| alphabet[next(if stars { 6 } else { 4 })])
                .collect::<String>()
        };
        let patterns: Vec<String> = (0..60).map(|_| word(true, &mut next)).collect();
        let index = PatternIndex::new(&patterns);
        for _ in 0..2000 {
            let name = word(false, &mut next);
            let mut found = Vec::new();
            index.for_each_match(&name, |at| found.push(at));
            found.sort_unstable();
            let scanned: Vec<usize> = (0..patterns.len())
                .filter(|&at| matches_pattern(&patterns[at], &name))
                .collect();
            assert_eq!(found, scanned, "{name:?}");
            assert_eq!(index.matches_any(&name), !scanned.is_empty());
        }
    }

    #[test]
    fn kinds_parse_as_written() {
        assert_eq!(ClaimKind::parse("Not-Worse"), Some(ClaimKind::NotWorse));
        assert_eq!(ClaimKind::parse("beats"), Some(ClaimKind::Beats));
        assert_eq!(ClaimKind::parse("better"), None);
    }
}
