//! Runs read twice: a run whose identifier was already read with every canonical
//! field equal counts once, and the kept run names the sources of its copies.
//!
//! Only runs whose identifier repeats can be copies, and most identifiers are read
//! once. So identifiers are hashed first (in parallel, with a fast non-cryptographic
//! hash, [`IdKey`]), and only the runs whose hash repeats are compared, field by
//! field: a hash that collides only costs a comparison, never a wrong decision.
//! [`set_aside_copies_in_batches`] does this for runs held in memory;
//! [`repeated_ids`] and [`decide_copies`] for a stream too long to hold (the few
//! runs whose hash repeats are read again and compared there).

use std::hash::BuildHasher;

use rayon::prelude::*;

use super::input::RunInput;

/// The identifier's hash: foldhash with a fixed seed (the same on every run of the
/// program; collisions are resolved by comparing the runs, so its quality only
/// bears on speed).
fn id_hash(id: &str) -> u64 {
    foldhash::fast::FixedState::with_seed(0x6761_7063_6572_7421).hash_one(id)
}

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

/// Where a run is: (batch, index in the batch), or (log, data row) in a stream.
type At = (usize, usize);

/// [`set_aside_copies`] over runs held in batches (in input order), without
/// gathering them into one vector.
pub fn set_aside_copies_in_batches(batches: &mut [Vec<RunInput>]) -> usize {
    // Identifiers hashed in parallel; only the runs whose hash repeats are compared.
    let mut hashed: Vec<(u64, At)> = batches
        .par_iter()
        .enumerate()
        .flat_map_iter(|(b, batch)| {
            batch
                .iter()
                .enumerate()
                .filter(|(_, run)| run.run != run.source)
                .map(move |(i, run)| (id_hash(&run.run), (b, i)))
        })
        .collect();
    let mut candidates = repeated_hashes(&mut hashed);
    if candidates.is_empty() {
        return 0;
    }
    candidates.sort_unstable();
    let runs: Vec<(At, &RunInput)> = candidates
        .iter()
        .map(|&(b, i)| ((b, i), &batches[b][i]))
        .collect();
    let decided = decide(&runs);
    for &(kept, copy) in &decided.copies {
        // The copy's own copies (identical files named by it) go to the kept run too.
        let source = batches[copy.0][copy.1].source.clone();
        let theirs = std::mem::take(&mut batches[copy.0][copy.1].copies);
        batches[kept.0][kept.1].copies.push(source);
        batches[kept.0][kept.1].copies.extend(theirs);
    }
    for &(b, i) in &decided.repeated {
        batches[b][i].id_repeated = true;
    }
    if decided.copies.is_empty() {
        return 0;
    }
    let mut set_aside: Vec<At> = decided.copies.iter().map(|&(_, copy)| copy).collect();
    set_aside.sort_unstable();
    for (b, batch) in batches.iter_mut().enumerate() {
        let mut i = 0;
        batch.retain(|_| {
            let keep = set_aside.binary_search(&(b, i)).is_err();
            i += 1;
            keep
        });
    }
    decided.copies.len()
}

/// The positions whose hash is shared with another position (sorts `hashed`).
fn repeated_hashes(hashed: &mut [(u64, At)]) -> Vec<At> {
    hashed.par_sort_unstable();
    hashed
        .chunk_by(|a, b| a.0 == b.0)
        .filter(|group| group.len() > 1)
        .flat_map(|group| group.iter().map(|&(_, at)| at))
        .collect()
}

/// What comparing the runs that share an identifier decided.
struct Decided {
    /// (kept run, its copy), in input order of the copies.
    copies: Vec<(At, At)>,
    /// Runs sharing an identifier with a different run.
    repeated: Vec<At>,
}

/// Decides among `runs` (in input order; every run whose identifier any other has):
/// the first of equal runs is kept, later ones are its copies; runs that share an
/// identifier but differ are all marked repeated.
fn decide(runs: &[(At, &RunInput)]) -> Decided {
    use foldhash::{HashMap, HashMapExt};
    use std::collections::hash_map::Entry;
    let mut copies: Vec<(At, At)> = Vec::new();
    let mut repeated: Vec<At> = Vec::new();
    let mut first: HashMap<&str, usize> = HashMap::with_capacity(runs.len());
    let mut differing: HashMap<&str, Vec<usize>> = HashMap::new();
    for (index, &(at, run)) in runs.iter().enumerate() {
        match first.entry(run.run.as_str()) {
            Entry::Vacant(entry) => {
                entry.insert(index);
            }
            Entry::Occupied(entry) => {
                let earlier = *entry.get();
                let others = differing.entry(run.run.as_str()).or_default();
                let same = std::iter::once(earlier)
                    .chain(others.iter().copied())
                    .find(|&k| same_run(runs[k].1, run));
                match same {
                    Some(kept) => copies.push((runs[kept].0, at)),
                    None => others.push(index),
                }
            }
        }
    }
    for (id, others) in differing {
        if !others.is_empty() {
            repeated.push(runs[first[id]].0);
            repeated.extend(others.iter().map(|&k| runs[k].0));
        }
    }
    Decided { copies, repeated }
}

/// A run's place in a stream too long to hold (more runs than the engine keeps in
/// memory): the hash of its identifier, the log it was read from and its data row.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub struct IdKey {
    pub hash: u64,
    pub log: u32,
    pub row: u64,
}

impl IdKey {
    /// The key of a run read from log `log`; `None` for runs named by their source
    /// (they cannot repeat) and sources without a row.
    pub fn of(run: &RunInput, log: u32) -> Option<IdKey> {
        if run.run == run.source {
            return None;
        }
        let row = data_row(run)?;
        Some(IdKey {
            hash: id_hash(&run.run),
            log,
            row,
        })
    }
}

/// The data row of a run named `file:row` (file names may hold colons, rows do
/// not).
fn data_row(run: &RunInput) -> Option<u64> {
    run.source.rsplit_once(':')?.1.parse().ok()
}

/// The (log, row) of every run whose identifier hash another run shares, sorted:
/// the only runs of a stream that can be copies. Usually none.
pub fn repeated_ids(keys: Vec<IdKey>) -> Vec<(u32, u64)> {
    let mut hashed: Vec<(u64, At)> = keys
        .into_iter()
        .map(|key| (key.hash, (key.log as usize, key.row as usize)))
        .collect();
    let mut repeated: Vec<(u32, u64)> = repeated_hashes(&mut hashed)
        .into_iter()
        .map(|(log, row)| (log as u32, row as u64))
        .collect();
    repeated.sort_unstable();
    repeated
}

/// What [`decide_copies`] decided for one log's runs, by data row.
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
        batch.retain(|run| {
            data_row(run).map_or(true, |row| self.set_aside.binary_search(&row).is_err())
        });
        for run in batch.iter_mut() {
            let Some(row) = data_row(run) else { continue };
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

/// [`set_aside_copies`]' decisions for a stream, per log: `runs` are the runs
/// [`repeated_ids`] named, read again, with their (log, row), in input order.
/// Returns the decisions and how many runs were set aside.
pub fn decide_copies(
    runs: &[((u32, u64), RunInput)],
) -> (std::collections::BTreeMap<u32, RowDecisions>, usize) {
    let at: Vec<(At, &RunInput)> = runs
        .iter()
        .map(|((log, row), run)| ((*log as usize, *row as usize), run))
        .collect();
    let decided = decide(&at);
    let mut decisions: std::collections::BTreeMap<u32, RowDecisions> = Default::default();
    let mut copies_of: std::collections::BTreeMap<At, Vec<(u32, u64)>> = Default::default();
    for &(kept, (log, row)) in &decided.copies {
        decisions
            .entry(log as u32)
            .or_default()
            .set_aside
            .push(row as u64);
        copies_of
            .entry(kept)
            .or_default()
            .push((log as u32, row as u64));
    }
    for ((log, row), copies) in copies_of {
        decisions
            .entry(log as u32)
            .or_default()
            .copies
            .push((row as u64, copies));
    }
    for &(log, row) in &decided.repeated {
        decisions
            .entry(log as u32)
            .or_default()
            .repeated
            .push(row as u64);
    }
    for decision in decisions.values_mut() {
        decision.set_aside.sort_unstable();
        decision.repeated.sort_unstable();
        decision.copies.sort_unstable_by_key(|(row, _)| *row);
    }
    (decisions, decided.copies.len())
}
