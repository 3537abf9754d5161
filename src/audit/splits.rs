//! Held-out split wear (SPEC §11): for each named split, how much certifying power
//! its comparisons have cost and how many more it can take.
//!
//! Every run compared on a split divides the level of every bound on it: K models
//! compared means bounds at δ/K. For the split's best run (lowest held-out error,
//! first in input order on ties) with k errors in n:
//!
//! - `certifiable_now` = 1 − U(k, n, δ/K), the highest accuracy the split can certify
//!   for it today; `certifiable_fresh` = 1 − U(k, n, δ), what a split used once would;
//!   `reuse_cost` their difference;
//! - `comparisons_left` = K_max − K, K_max the largest K at which the best run's claim
//!   is still certified (`theory::reuse`), null when the claim is not certified today
//!   (or there is none), capped at 10¹²;
//! - with `logged_at`, the wear history: the runs in time order, each with K so far
//!   (the runs logged so far, or a larger `candidates` logged among them) and the
//!   certifiable accuracy of the best run so far at that K.
//!
//! U is the bound `--holdout-bound` chooses (exact binomial by default).

use serde::{Deserialize, Serialize};

use super::claims::ClaimResult;
use super::finding::{Finding, FindingCode};
use super::per_run::one_sided_bounds;
use super::result::RunResult;
use super::settings::{AuditSettings, HoldoutBound};
use crate::claim::ClaimKind;
use crate::theory::reuse::{max_candidates_binomial, max_candidates_hoeffding, CANDIDATES_CAP};

/// One point of a split's wear history.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct WearPoint {
    pub run: String,
    pub logged_at: String,
    /// K after this run: models compared on the split so far.
    pub compared: u64,
    /// The best run so far and the accuracy it could certify at that K.
    pub best_run: String,
    pub certifiable_accuracy: f64,
}

/// Everything the audit says about one held-out split; field names are SPEC §11's.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct SplitEntry {
    pub split: String,
    /// The best run's held-out size (the split's, when its runs agree).
    pub holdout_n: u64,
    /// K: the largest K of SPEC §4 among the split's runs.
    pub candidates: u64,
    /// Runs in this audit that name the split.
    pub runs: u64,
    pub first_logged_at: Option<String>,
    pub last_logged_at: Option<String>,
    pub best_run: String,
    pub best_error_rate: f64,
    pub best_misclassified: u64,
    /// The best run's claimed error (its own, `--claim-accuracy`'s, or a claims
    /// file's: see `claim`).
    pub claim_error_rate: Option<f64>,
    pub certifiable_now: f64,
    pub certifiable_fresh: f64,
    pub reuse_cost: f64,
    pub comparisons_left: Option<u64>,
    /// Runs of the split log different held-out sizes (finding `split_size_mismatch`).
    pub size_mismatch: bool,
    /// What is said once about the split as a whole (`split_size_mismatch`, with the
    /// sizes its runs log); its runs carry the code and a short pointer here.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub findings: Vec<Finding>,
    /// The claim of a claims file `claim_error_rate` and `comparisons_left` come from,
    /// when the best run has no claim of its own.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub claim: Option<String>,
    /// Every spelling of the split's name when other splits differ from it only in
    /// case (finding `split_names_differ_in_case`), sorted; empty otherwise.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub spellings: Vec<String>,
    /// δ before the division by K (after `--familywise`): the level of a split used
    /// once.
    pub delta: f64,
    /// The bound the values use (`--holdout-bound`).
    pub bound: HoldoutBound,
    pub history: Vec<WearPoint>,
}

/// What a split's runs have shown so far.
#[derive(Clone, Debug)]
struct SplitState {
    split: String,
    runs: u64,
    compared: u64,
    best: RunRef,
    first_logged_at: Option<String>,
    last_logged_at: Option<String>,
    smallest_n: u64,
    largest_n: u64,
    /// (logged_at, input order, run) for the history.
    timeline: Vec<(String, u64, RunRef)>,
}

/// What a split entry needs of one run.
#[derive(Clone, Debug)]
struct RunRef {
    run: String,
    rate: f64,
    k: u64,
    n: u64,
    /// The `candidates` the run logged (before grouping): a run picked from a search
    /// of its own counts that many models.
    candidates_logged: u64,
    /// K of the run (after grouping).
    compared: u64,
    claim: Option<f64>,
}

impl RunRef {
    fn of(run: &RunResult) -> RunRef {
        RunRef {
            run: run.run.clone(),
            rate: run.holdout_error_rate,
            k: run.holdout_misclassified,
            n: run.holdout_n,
            candidates_logged: run.candidates_logged,
            compared: run.candidates,
            claim: run.claim_error_rate,
        }
    }
}

/// What a split needs of one run that names it (made on any thread; added in input
/// order).
#[derive(Clone, Debug)]
pub struct SplitObservation {
    split: String,
    logged_at: Option<String>,
    run: RunRef,
}

impl SplitObservation {
    /// The observation of `run`, if it names a split.
    pub fn of(run: &RunResult) -> Option<SplitObservation> {
        Some(SplitObservation {
            split: run.holdout_set.clone()?,
            logged_at: run.logged_at.clone(),
            run: RunRef::of(run),
        })
    }
}

/// Collects the splits' states run by run (in input order), so that a streamed audit
/// can build the entries without holding its runs.
#[derive(Clone, Debug, Default)]
pub struct SplitAccumulator {
    splits: Vec<SplitState>,
    index: std::collections::HashMap<String, usize>,
    seen: u64,
}

impl SplitAccumulator {
    /// Adds one run (runs must come in input order).
    pub fn observe(&mut self, run: &RunResult) {
        if let Some(observation) = SplitObservation::of(run) {
            self.add(observation);
        }
    }

    /// Adds one observation (in input order).
    pub fn add(&mut self, observation: SplitObservation) {
        self.seen += 1;
        let order = self.seen;
        let SplitObservation {
            split,
            logged_at,
            run,
        } = observation;
        let at = match self.index.get(&split) {
            Some(&at) => at,
            None => {
                self.index.insert(split.clone(), self.splits.len());
                self.splits.push(SplitState {
                    split,
                    runs: 0,
                    compared: 0,
                    best: run.clone(),
                    first_logged_at: None,
                    last_logged_at: None,
                    smallest_n: run.n,
                    largest_n: run.n,
                    timeline: Vec::new(),
                });
                self.splits.len() - 1
            }
        };
        let state = &mut self.splits[at];
        state.runs += 1;
        state.compared = state.compared.max(run.compared);
        // Lowest error; on ties the first in input order stays.
        if run.rate < state.best.rate {
            state.best = run.clone();
        }
        state.smallest_n = state.smallest_n.min(run.n);
        state.largest_n = state.largest_n.max(run.n);
        if let Some(logged_at) = logged_at {
            // RFC 3339 in UTC with the same layout sorts as text.
            if state
                .first_logged_at
                .as_ref()
                .map_or(true, |first| logged_at < *first)
            {
                state.first_logged_at = Some(logged_at.clone());
            }
            if state
                .last_logged_at
                .as_ref()
                .map_or(true, |last| logged_at > *last)
            {
                state.last_logged_at = Some(logged_at.clone());
            }
            state.timeline.push((logged_at, order, run));
        }
    }

    /// The split entries, in the order the splits first appear. `delta` is δ after
    /// `--familywise` (the runs' δ/K times K).
    pub fn finish(self, settings: &AuditSettings, delta: f64) -> Vec<SplitEntry> {
        self.finish_with_claims(settings, delta, &[])
    }

    /// [`SplitAccumulator::finish`], with the claims of the claims files: a best run
    /// without a claim of its own takes the strictest `accuracy` / `error` claim that
    /// names it exactly (SPEC §11's "the best run's claim").
    pub fn finish_with_claims(
        self,
        settings: &AuditSettings,
        delta: f64,
        claims: &[ClaimResult],
    ) -> Vec<SplitEntry> {
        let twins = split_spellings(self.splits.iter().map(|state| state.split.as_str()));
        self.splits
            .into_iter()
            .map(|mut state| {
                let mut claim = None;
                if state.best.claim.is_none() {
                    if let Some(file_claim) = file_claim_on(claims, &state.best.run) {
                        state.best.claim = Some(file_claim.threshold);
                        claim = Some(file_claim.claim.clone());
                    }
                }
                let spellings = twins.get(&state.split).cloned().unwrap_or_default();
                SplitEntry {
                    spellings,
                    claim,
                    ..entry(state, settings, delta)
                }
            })
            .collect()
    }
}

/// Groups split names that differ only in case: for each name with another spelling,
/// every spelling of it, sorted. Names with one spelling are left out.
pub fn split_spellings<'a>(
    names: impl Iterator<Item = &'a str>,
) -> std::collections::HashMap<String, Vec<String>> {
    let mut groups: std::collections::HashMap<String, Vec<String>> =
        std::collections::HashMap::new();
    for name in names {
        let spellings = groups.entry(name.to_lowercase()).or_default();
        if !spellings.iter().any(|known| known == name) {
            spellings.push(name.to_string());
        }
    }
    let mut twins = std::collections::HashMap::new();
    for (_, mut spellings) in groups {
        if spellings.len() > 1 {
            spellings.sort_unstable();
            for name in &spellings {
                twins.insert(name.clone(), spellings.clone());
            }
        }
    }
    twins
}

/// The strictest claim of a claims file on `run` alone (kind `accuracy` or `error`,
/// the run named exactly, the lowest claimed error rate); ties go to the first claim.
pub fn file_claim_on<'a>(claims: &'a [ClaimResult], run: &str) -> Option<&'a ClaimResult> {
    claims
        .iter()
        .filter(|claim| {
            matches!(claim.kind, ClaimKind::Accuracy | ClaimKind::Error)
                && claim.run == run
                && !claim.run.contains(['*', '?'])
        })
        .fold(None, |best: Option<&ClaimResult>, next| match best {
            Some(best) if best.threshold <= next.threshold => Some(best),
            _ => Some(next),
        })
}

/// The split entries of `runs` (in input order).
pub fn split_entries(runs: &[RunResult], settings: &AuditSettings, delta: f64) -> Vec<SplitEntry> {
    let mut accumulator = SplitAccumulator::default();
    for run in runs {
        accumulator.observe(run);
    }
    accumulator.finish(settings, delta)
}

/// 1 − U(best, δ/K): the accuracy the best run can certify with K compared.
fn certifiable(best: &RunRef, compared: u64, delta: f64, bound: HoldoutBound) -> f64 {
    let (_, upper) = one_sided_bounds(
        best.k,
        best.n,
        best.rate,
        delta / compared.max(1) as f64,
        bound,
    );
    1.0 - upper
}

/// K_max for the best run's claim under `bound`.
pub fn max_candidates(
    k: u64,
    n: u64,
    rate: f64,
    claim: f64,
    delta: f64,
    bound: HoldoutBound,
) -> Option<u64> {
    match bound {
        HoldoutBound::Binomial => max_candidates_binomial(k, n, claim, delta),
        HoldoutBound::Hoeffding => max_candidates_hoeffding(rate, n, claim, delta),
    }
}

fn entry(state: SplitState, settings: &AuditSettings, delta: f64) -> SplitEntry {
    let findings = size_findings(&state);
    let bound = settings.holdout_bound;
    let best = &state.best;
    let compared = state.compared.max(state.runs).max(1);
    let certifiable_now = certifiable(best, compared, delta, bound);
    let certifiable_fresh = certifiable(best, 1, delta, bound);
    let comparisons_left = best.claim.and_then(|claim| {
        let most = max_candidates(best.k, best.n, best.rate, claim, delta, bound)?;
        (most >= compared).then(|| {
            if most >= CANDIDATES_CAP {
                CANDIDATES_CAP - compared
            } else {
                most - compared
            }
        })
    });
    let mut timeline = state.timeline;
    timeline.sort_by(|a, b| a.0.cmp(&b.0).then(a.1.cmp(&b.1)));
    let mut history = Vec::with_capacity(timeline.len());
    let mut best_so_far: Option<RunRef> = None;
    let mut compared_so_far = 0u64;
    for (index, (logged_at, _, run)) in timeline.into_iter().enumerate() {
        compared_so_far = compared_so_far
            .max(index as u64 + 1)
            .max(run.candidates_logged);
        if best_so_far.as_ref().map_or(true, |b| run.rate < b.rate) {
            best_so_far = Some(run.clone());
        }
        let best = best_so_far.as_ref().expect("set above");
        history.push(WearPoint {
            run: run.run,
            logged_at,
            compared: compared_so_far,
            best_run: best.run.clone(),
            certifiable_accuracy: certifiable(best, compared_so_far, delta, bound),
        });
    }
    SplitEntry {
        holdout_n: best.n,
        candidates: compared,
        runs: state.runs,
        first_logged_at: state.first_logged_at,
        last_logged_at: state.last_logged_at,
        best_run: best.run.clone(),
        best_error_rate: best.rate,
        best_misclassified: best.k,
        claim_error_rate: best.claim,
        certifiable_now,
        certifiable_fresh,
        reuse_cost: certifiable_fresh - certifiable_now,
        comparisons_left,
        size_mismatch: state.smallest_n != state.largest_n,
        findings,
        spellings: Vec::new(),
        claim: None,
        delta,
        bound,
        history,
        split: state.split,
    }
}

/// The split's `split_size_mismatch`, said once: the sizes its runs log.
fn size_findings(state: &SplitState) -> Vec<Finding> {
    if state.smallest_n == state.largest_n {
        return Vec::new();
    }
    vec![Finding {
        code: FindingCode::SplitSizeMismatch,
        message: format!(
            "runs of the held-out split `{}` log between {} and {} held-out examples: runs of one split should share one set of examples, so the split's name may be reused for different sets, and K may count runs that were not compared",
            state.split,
            crate::decimal::group_thousands(state.smallest_n),
            crate::decimal::group_thousands(state.largest_n)
        ),
    }]
}

impl SplitEntry {
    /// The accuracy the split's best run could certify with `compared` models
    /// compared on the split (for the wear chart).
    pub fn certifiable_at(&self, compared: u64) -> f64 {
        let best = RunRef {
            run: String::new(),
            rate: self.best_error_rate,
            k: self.best_misclassified,
            n: self.holdout_n,
            candidates_logged: 1,
            compared,
            claim: None,
        };
        certifiable(&best, compared, self.delta, self.bound)
    }
}
