//! Runs read twice: a run whose identifier was already read with every canonical
//! field equal counts once, and the kept run names the sources of its copies. Two
//! ways to decide: [`set_aside_copies`] compares runs held in memory;
//! [`copies_among_keys`] decides from hashed keys ([`RunKey`]) when the stream is
//! too long to hold.

use super::input::RunInput;

/// Whether two runs read from different rows say the same thing: every canonical
/// field equal (their sources aside).
fn same_run(a: &RunInput, b: &RunInput) -> bool {
    let bits = |x: Option<f64>| x.map(f64::to_bits);
    a.run == b.run
        && a.family_key == b.family_key
        && a.family == b.family
        && a.train_n == b.train_n
        && bits(a.train_error_rate) == bits(b.train_error_rate)
        && a.holdout_n == b.holdout_n
        && a.holdout_error_rate.to_bits() == b.holdout_error_rate.to_bits()
        && a.holdout_misclassified == b.holdout_misclassified
        && a.holdout_set == b.holdout_set
        && a.candidates == b.candidates
        && bits(a.claim_error_rate) == bits(b.claim_error_rate)
        && a.logged_at == b.logged_at
}

/// Sets aside runs read twice: a run whose identifier was already read with every
/// canonical field equal (a log copied into the folder, a row repeated) counts once,
/// for K and in every output, and the kept run names the sources of its copies.
/// Runs that share an identifier but differ are all kept and marked `id_repeated`
/// (finding `run_id_repeated`). Runs without an identifier of their own (named
/// `file:row`) cannot repeat. Returns how many runs were set aside.
pub fn set_aside_copies(runs: &mut Vec<RunInput>) -> usize {
    set_aside_copies_in_batches(std::slice::from_mut(runs))
}

/// [`set_aside_copies`] over runs held in batches (in input order), without
/// gathering them into one vector.
pub fn set_aside_copies_in_batches(batches: &mut [Vec<RunInput>]) -> usize {
    use foldhash::{HashMap, HashMapExt};
    use std::collections::hash_map::Entry;
    type At = (usize, usize);
    // (kept run, source of its copy), and the runs sharing an identifier but differing.
    let mut copies: Vec<(At, At)> = Vec::new();
    let mut repeated: Vec<At> = Vec::new();
    {
        let total = batches.iter().map(Vec::len).sum();
        // Most identifiers are read once: one map entry each, borrowed, and further
        // work only when an identifier comes back.
        let mut first: HashMap<&str, At> = HashMap::with_capacity(total);
        let mut differing: HashMap<&str, Vec<At>> = HashMap::new();
        for (b, batch) in batches.iter().enumerate() {
            for (i, run) in batch.iter().enumerate() {
                if run.run == run.source {
                    continue;
                }
                match first.entry(run.run.as_str()) {
                    Entry::Vacant(entry) => {
                        entry.insert((b, i));
                    }
                    Entry::Occupied(entry) => {
                        let earlier = *entry.get();
                        let others = differing.entry(run.run.as_str()).or_default();
                        let same = std::iter::once(earlier)
                            .chain(others.iter().copied())
                            .find(|&(kb, ki)| same_run(&batches[kb][ki], run));
                        match same {
                            Some(kept) => copies.push((kept, (b, i))),
                            None => others.push((b, i)),
                        }
                    }
                }
            }
        }
        for (id, others) in differing {
            if !others.is_empty() {
                repeated.push(first[id]);
                repeated.extend(others);
            }
        }
    }
    for &((kb, ki), (cb, ci)) in &copies {
        // The copy's own copies (identical files named by it) go to the kept run too.
        let source = batches[cb][ci].source.clone();
        let theirs = std::mem::take(&mut batches[cb][ci].copies);
        batches[kb][ki].copies.push(source);
        batches[kb][ki].copies.extend(theirs);
    }
    for (b, i) in repeated {
        batches[b][i].id_repeated = true;
    }
    if copies.is_empty() {
        return 0;
    }
    let mut set_aside: Vec<At> = copies.iter().map(|&(_, copy)| copy).collect();
    set_aside.sort_unstable();
    for (b, batch) in batches.iter_mut().enumerate() {
        let mut i = 0;
        batch.retain(|_| {
            let keep = set_aside.binary_search(&(b, i)).is_err();
            i += 1;
            keep
        });
    }
    copies.len()
}

/// A run's identity in a stream too long to hold (more runs than the engine keeps
/// in memory): hashes of its identifier and of its canonical fields, and where it was
/// read. 128-bit hashes make a false match about as likely as 10⁻²⁵ for ten million
/// runs; runs with equal keys are treated as copies without comparing the fields.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub struct RunKey {
    pub id: u128,
    pub fields: u128,
    /// Index of the log the run was read from, and its data row.
    pub log: u32,
    pub row: u64,
}

/// Two independent 64-bit SipHash values of `value` (std's hasher with fixed keys, so
/// the same on every run of the program) as one 128-bit hash.
fn hash128<T: std::hash::Hash + ?Sized>(value: &T) -> u128 {
    use std::hash::{BuildHasher, BuildHasherDefault, DefaultHasher};
    let build = BuildHasherDefault::<DefaultHasher>::default();
    let low = build.hash_one((0u8, value));
    let high = build.hash_one((1u8, value));
    (u128::from(high) << 64) | u128::from(low)
}

impl RunKey {
    /// The key of a run read from log `log`; `None` for runs named by their source
    /// (they cannot repeat) and sources without a row.
    pub fn of(run: &RunInput, log: u32) -> Option<RunKey> {
        if run.run == run.source {
            return None;
        }
        let row = run.source.rsplit_once(':')?.1.parse().ok()?;
        let bits = |x: Option<f64>| x.map(f64::to_bits);
        let fields = (
            &run.run,
            &run.family_key,
            run.family.map(|f| format!("{f:?}")),
            run.train_n,
            bits(run.train_error_rate),
            run.holdout_n,
            run.holdout_error_rate.to_bits(),
            run.holdout_misclassified,
            &run.holdout_set,
            run.candidates,
            bits(run.claim_error_rate),
            &run.logged_at,
        );
        Some(RunKey {
            id: hash128(run.run.as_str()),
            fields: hash128(&fields),
            log,
            row,
        })
    }
}

/// What [`copies_among_keys`] decided for one log's runs, by data row.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct RowDecisions {
    /// Rows set aside as copies of an earlier run (sorted).
    pub set_aside: Vec<u64>,
    /// Rows sharing an identifier with a different run (sorted).
    pub repeated: Vec<u64>,
    /// Kept rows and the (log, row) of their copies.
    pub copies: Vec<(u64, Vec<(u32, u64)>)>,
}

impl RowDecisions {
    /// Applies the decisions to a batch of this log's runs (rows from their sources);
    /// `sources` gives the sources a copy at (log index, row) stands for: its own, and
    /// those of the identical files it was read in place of.
    pub fn apply(&self, batch: &mut Vec<RunInput>, sources: &dyn Fn(u32, u64) -> Vec<String>) {
        let row_of = |run: &RunInput| -> Option<u64> {
            run.source
                .rsplit_once(':')
                .and_then(|(_, row)| row.parse().ok())
        };
        batch.retain(|run| {
            row_of(run).map_or(true, |row| self.set_aside.binary_search(&row).is_err())
        });
        for run in batch.iter_mut() {
            let Some(row) = row_of(run) else { continue };
            if self.repeated.binary_search(&row).is_ok() {
                run.id_repeated = true;
            }
            if let Ok(at) = self.copies.binary_search_by_key(&row, |(kept, _)| *kept) {
                for &(log, row) in &self.copies[at].1 {
                    run.copies.extend(sources(log, row));
                }
            }
        }
    }
}

/// [`set_aside_copies`]' decisions from run keys alone: per log, the rows set aside,
/// the rows marked `id_repeated` and the copies each kept row names. The earliest run
/// (by log, then row) of equal keys is kept, as [`set_aside_copies`] keeps the first
/// read. Returns the decisions and how many runs were set aside.
pub fn copies_among_keys(
    mut keys: Vec<RunKey>,
) -> (std::collections::BTreeMap<u32, RowDecisions>, usize) {
    let mut decisions: std::collections::BTreeMap<u32, RowDecisions> = Default::default();
    let mut set_aside = 0;
    keys.sort_unstable();
    for same_id in keys.chunk_by(|a, b| a.id == b.id) {
        if same_id.len() == 1 {
            continue;
        }
        let groups: Vec<&[RunKey]> = same_id.chunk_by(|a, b| a.fields == b.fields).collect();
        for group in &groups {
            let kept = group[0];
            if group.len() > 1 {
                let copies: Vec<(u32, u64)> = group[1..].iter().map(|k| (k.log, k.row)).collect();
                for copy in &group[1..] {
                    decisions
                        .entry(copy.log)
                        .or_default()
                        .set_aside
                        .push(copy.row);
                }
                set_aside += copies.len();
                decisions
                    .entry(kept.log)
                    .or_default()
                    .copies
                    .push((kept.row, copies));
            }
            if groups.len() > 1 {
                decisions
                    .entry(kept.log)
                    .or_default()
                    .repeated
                    .push(kept.row);
            }
        }
    }
    for decision in decisions.values_mut() {
        decision.set_aside.sort_unstable();
        decision.repeated.sort_unstable();
        decision.copies.sort_unstable_by_key(|(row, _)| *row);
    }
    (decisions, set_aside)
}
