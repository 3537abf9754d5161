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
    let pattern: Vec<char> = pattern.chars().collect();
    let name: Vec<char> = name.chars().collect();
    // Iterative matching with the last `*` remembered (linear in practice, never
    // exponential).
    let (mut p, mut n) = (0, 0);
    let mut star: Option<(usize, usize)> = None;
    while n < name.len() {
        if p < pattern.len() && (pattern[p] == '?' || pattern[p] == name[n]) {
            p += 1;
            n += 1;
        } else if p < pattern.len() && pattern[p] == '*' {
            star = Some((p, n));
            p += 1;
        } else if let Some((star_p, star_n)) = star {
            p = star_p + 1;
            n = star_n + 1;
            star = Some((star_p, star_n + 1));
        } else {
            return false;
        }
    }
    while p < pattern.len() && pattern[p] == '*' {
        p += 1;
    }
    p == pattern.len()
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
    }

    #[test]
    fn kinds_parse_as_written() {
        assert_eq!(ClaimKind::parse("Not-Worse"), Some(ClaimKind::NotWorse));
        assert_eq!(ClaimKind::parse("beats"), Some(ClaimKind::Beats));
        assert_eq!(ClaimKind::parse("better"), None);
    }
}
