//! "Did you mean …?": the known name closest to a mistyped one (family keys, column
//! names).

use crate::theory::growth::{catalogue, is_known_key};

/// The known family key closest to an unknown `key`, when it is close enough to be a
/// slip of the keyboard: at most two edits (insertions, deletions, substitutions or
/// swaps of neighbours; Damerau 1964, the optimal-string-alignment distance), and
/// fewer than the key's length, or the known key starts with it.
pub fn suggest_family(key: &str) -> Option<&'static str> {
    let key = key.trim().to_ascii_lowercase();
    if key.is_empty() || is_known_key(&key) {
        return None;
    }
    catalogue()
        .iter()
        .map(|f| (edit_distance(&key, f.key), f.key))
        .filter(|&(distance, known)| {
            (distance <= 2 && distance < key.chars().count())
                || (key.len() >= 3 && known.starts_with(key.as_str()))
        })
        .min_by_key(|&(distance, _)| distance)
        .map(|(_, known)| known)
}

/// The sentence an unknown family key gets, the same in the audit (finding
/// `theory_unavailable`) and in `gapcert plan train` / `growth`.
pub fn unknown_family_sentence(key: &str) -> String {
    let mut sentence =
        format!("family `{key}` has no known growth bound, so no VC bound can be computed");
    match suggest_family(key) {
        Some(known) => sentence.push_str(&format!(" (did you mean `{known}`?)")),
        None => sentence.push_str(" (`gapcert families` lists the known ones)"),
    }
    sentence
}

/// Optimal-string-alignment distance (F. J. Damerau, "A technique for computer
/// detection and correction of spelling errors", CACM 7(3), 1964, 171–176; reference
/// from memory): insertions, deletions, substitutions and swaps of neighbours.
pub fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut rows = vec![vec![0usize; b.len() + 1]; a.len() + 1];
    for (i, row) in rows.iter_mut().enumerate() {
        row[0] = i;
    }
    for (j, cell) in rows[0].iter_mut().enumerate() {
        *cell = j;
    }
    for i in 1..=a.len() {
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            let mut best = (rows[i - 1][j] + 1)
                .min(rows[i][j - 1] + 1)
                .min(rows[i - 1][j - 1] + cost);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                best = best.min(rows[i - 2][j - 2] + 1);
            }
            rows[i][j] = best;
        }
    }
    rows[a.len()][b.len()]
}
