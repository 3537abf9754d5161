//! The audit: selection correction, per-run bounds, verdicts and findings (SPEC §4).
//!
//! Data flows one way: ingest produced [`RunInput`]s; this module turns them into
//! [`RunResult`]s by calling `theory/`; reports only read the results.

pub mod claims;
pub mod explain;
pub mod finding;
pub mod per_run;
pub mod result;
pub mod settings;
pub mod splits;

// foldhash: these maps are looked up once or more per run.
use foldhash::HashMap;
use std::sync::Mutex;

use rayon::prelude::*;

pub use finding::{Finding, FindingCode};
pub use per_run::{audit_run, holdout_needed_for, RunContext};
pub use result::{
    gate_fails_on_claim, gate_fails_on_run, gate_reason, GateResult, RunResult, Summary, Verdict,
};

pub use settings::{AuditSettings, Gate, HoldoutBound};

use crate::error::Error;
use crate::run::RunInput;
use crate::theory::growth::Family;
use crate::theory::vc;

/// What the audit must know about all runs before it audits any one of them: how many
/// runs carry a claim (for `--familywise`) and how many share each held-out split
/// (for K). Built by [`AuditScope::observe`]-ing every run once, so a log too large to
/// hold in memory can be read twice: once to build the scope, once to audit.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct AuditScope {
    runs: u64,
    claims: u64,
    /// Per held-out split: the runs that name it, and the smallest and largest
    /// `holdout_n` they log (runs of one split should log one size).
    sharing: HashMap<String, SplitCount>,
}

/// What the scope knows of one held-out split.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
struct SplitCount {
    runs: u64,
    smallest_n: u64,
    largest_n: u64,
}

impl AuditScope {
    /// The scope of the given runs.
    pub fn of(inputs: &[RunInput]) -> AuditScope {
        let mut scope = AuditScope::default();
        for input in inputs {
            scope.observe(input);
        }
        scope
    }

    /// Counts one run.
    pub fn observe(&mut self, input: &RunInput) {
        self.runs += 1;
        if input.claim_error_rate.is_some() {
            self.claims += 1;
        }
        if let Some(split) = input.holdout_set.as_deref() {
            let n = input.holdout_n;
            match self.sharing.get_mut(split) {
                Some(count) => {
                    count.runs += 1;
                    count.smallest_n = count.smallest_n.min(n);
                    count.largest_n = count.largest_n.max(n);
                }
                None => {
                    self.sharing.insert(
                        split.to_string(),
                        SplitCount {
                            runs: 1,
                            smallest_n: n,
                            largest_n: n,
                        },
                    );
                }
            }
        }
    }

    /// Whether the runs of `input`'s split log different held-out sizes.
    pub fn split_size_mismatch(&self, input: &RunInput) -> bool {
        input
            .holdout_set
            .as_deref()
            .and_then(|split| self.sharing.get(split))
            .is_some_and(|count| count.smallest_n != count.largest_n)
    }

    /// Counts `claims` claims of claims files, which `--familywise` divides δ among
    /// with the runs' own claims.
    pub fn add_claims(&mut self, claims: u64) {
        self.claims += claims;
    }

    /// Adds the counts of another scope (of other runs).
    pub fn merge(&mut self, other: AuditScope) {
        self.runs += other.runs;
        self.claims += other.claims;
        for (split, count) in other.sharing {
            let entry = self.sharing.entry(split).or_insert(SplitCount {
                runs: 0,
                smallest_n: count.smallest_n,
                largest_n: count.largest_n,
            });
            entry.runs += count.runs;
            entry.smallest_n = entry.smallest_n.min(count.smallest_n);
            entry.largest_n = entry.largest_n.max(count.largest_n);
        }
    }

    /// Settings that contradict the runs: `--same-holdout` declares one shared split,
    /// and runs that name several splits say otherwise.
    pub fn check(&self, settings: &AuditSettings) -> Result<(), Error> {
        if settings.same_holdout && self.sharing.len() > 1 {
            let mut names: Vec<&str> = self.sharing.keys().map(String::as_str).collect();
            names.sort_unstable();
            let shown = names.len().min(5);
            return Err(Error::Usage(format!(
                "--same-holdout declares that every run was compared on one held-out split, but the logs name {} splits ({}{}); drop --same-holdout and holdout_set sets K split by split",
                names.len(),
                names[..shown].join(", "),
                if names.len() > shown { ", …" } else { "" }
            )));
        }
        Ok(())
    }

    /// Per held-out split whose name another split spells differently only in case:
    /// every spelling of that name, sorted (finding `split_names_differ_in_case`).
    pub fn case_twins(&self) -> std::collections::HashMap<String, Vec<String>> {
        splits::split_spellings(self.sharing.keys().map(String::as_str))
    }

    /// δ after the family-wise (Bonferroni) division, when asked for.
    pub fn delta(&self, settings: &AuditSettings) -> f64 {
        let delta = settings.delta();
        if settings.familywise {
            delta / self.claims.max(1) as f64
        } else {
            delta
        }
    }

    /// K for one run: max(candidates, runs sharing the run's held-out split).
    pub fn compared(&self, input: &RunInput, settings: &AuditSettings) -> u64 {
        let shared = if settings.same_holdout {
            self.runs
        } else {
            input
                .holdout_set
                .as_deref()
                .and_then(|split| self.sharing.get(split).map(|count| count.runs))
                .unwrap_or(1)
        };
        input.candidates.max(shared)
    }
}

/// Audits every run (in parallel; the result order is the input order): the
/// mathematics of one audit without reading or reporting (the engine,
/// [`crate::engine`], adds those).
pub fn audit_runs(inputs: &[RunInput], settings: &AuditSettings) -> Vec<RunResult> {
    let scope = AuditScope::of(inputs);
    Auditor::new(&scope, settings).audit(inputs.to_vec())
}

/// Audits batches of runs against one [`AuditScope`]. The solutions that many runs
/// share (`train_needed` per family, `holdout_needed` per (rate, claim, δ/K)) are
/// remembered across batches. Each run's result depends only on the run, the scope
/// and the settings, so the batches' results equal a single audit of all runs.
pub struct Auditor<'a> {
    settings: &'a AuditSettings,
    scope: &'a AuditScope,
    delta: f64,
    train_needed: Mutex<HashMap<Family, Option<u64>>>,
    holdout_needed: Mutex<HashMap<ClaimKey, Option<u64>>>,
    messages: bool,
    /// Splits spelled in more than one case, with every spelling.
    case_twins: std::collections::HashMap<String, Vec<String>>,
}

/// (observed rate, claimed error rate, δ/K) as bits: the inputs of `holdout_needed`.
type ClaimKey = (u64, u64, u64);

impl<'a> Auditor<'a> {
    pub fn new(scope: &'a AuditScope, settings: &'a AuditSettings) -> Auditor<'a> {
        Auditor {
            settings,
            scope,
            delta: scope.delta(settings),
            train_needed: Mutex::new(HashMap::default()),
            holdout_needed: Mutex::new(HashMap::default()),
            messages: true,
            case_twins: scope.case_twins(),
        }
    }

    /// Findings with codes and empty messages (see [`RunContext::messages`]), and no
    /// explanation: what the flat formats write unless asked for sentences.
    pub fn codes_only(mut self) -> Self {
        self.messages = false;
        self
    }

    /// Audits one batch (in parallel; the result order is the input order).
    pub fn audit(&self, inputs: Vec<RunInput>) -> Vec<RunResult> {
        let settings = self.settings;
        let delta = self.delta;

        // train_needed depends only on the family, δ and the tolerance: solve once per
        // distinct family, in parallel (a sweep over many sizes has many families).
        let started = std::time::Instant::now();
        let train_needed = {
            let mut known = lock(&self.train_needed);
            let mut missing: foldhash::HashSet<Family> = foldhash::HashSet::default();
            for family in inputs.iter().filter_map(|r| r.family) {
                if !known.contains_key(&family) {
                    missing.insert(family);
                }
            }
            let solved: Vec<(Family, Option<u64>)> = missing
                .into_par_iter()
                .map(|family| (family, vc::train_needed(&family, settings.tolerance, delta)))
                .collect();
            known.extend(solved);
            known.clone()
        };
        crate::timing::phase("  train_needed per family", started);

        // holdout_needed is a search over n (a dozen tail evaluations); sweeps may
        // repeat the same (rate, claim, δ/K), so each distinct one is solved once and
        // remembered. Looked up inside the parallel map: no serial pass over the batch.
        let holdout_needed = |r: &RunResult| -> Option<u64> {
            let claim =
                per_run::claim_needing_size(r.verdict, r.holdout_error_rate, r.claim_error_rate)?;
            let key: ClaimKey = (
                r.holdout_error_rate.to_bits(),
                claim.to_bits(),
                r.delta.to_bits(),
            );
            if let Some(&known) = lock(&self.holdout_needed).get(&key) {
                return known;
            }
            let needed = holdout_needed_for(
                r.verdict,
                r.holdout_error_rate,
                r.claim_error_rate,
                r.delta,
                settings.holdout_bound,
            );
            lock(&self.holdout_needed).insert(key, needed);
            needed
        };
        inputs
            .into_par_iter()
            .map(|input| {
                let context = RunContext {
                    compared: self.scope.compared(&input, settings),
                    delta,
                    train_needed: input
                        .family
                        .and_then(|f| train_needed.get(&f).copied().flatten()),
                    defer_holdout_needed: true,
                    messages: self.messages,
                    split_size_mismatch: self.scope.split_size_mismatch(&input),
                };
                let mut result = audit_run(input, context, settings);
                if let Some(spellings) = result
                    .holdout_set
                    .as_ref()
                    .and_then(|split| self.case_twins.get(split))
                {
                    result.split_spellings = spellings.clone();
                    let mut finding = Finding {
                        code: FindingCode::SplitNamesDifferInCase,
                        message: String::new(),
                    };
                    if self.messages {
                        finding.message = explain::finding_message(
                            &result,
                            FindingCode::SplitNamesDifferInCase,
                            settings,
                        );
                    }
                    result.findings.push(finding);
                }
                result.holdout_needed = holdout_needed(&result);
                if self.messages {
                    result.explanation = explain::explanation(&result);
                }
                result
            })
            .collect()
    }
}

/// Locks a cache; a poisoned lock (a panic elsewhere) still holds valid entries.
fn lock<T>(mutex: &Mutex<T>) -> std::sync::MutexGuard<'_, T> {
    mutex
        .lock()
        .unwrap_or_else(|poisoned| poisoned.into_inner())
}
