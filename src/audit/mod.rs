//! The audit: selection correction, per-run bounds, verdicts and findings (SPEC §4).
//!
//! Data flows one way: ingest produced [`RunInput`]s; this module turns them into
//! [`RunResult`]s by calling `theory/`; reports only read the results.

pub mod result;
pub mod run;
pub mod settings;

use std::collections::HashMap;

use rayon::prelude::*;

pub use result::{Finding, FindingCode, GateResult, RunResult, Summary, Verdict};
pub use run::{audit_run, holdout_needed_for, RunContext};
pub use settings::{AuditSettings, Gate, HoldoutBound};

use crate::ingest::RunInput;
use crate::theory::growth::Family;
use crate::theory::vc;

/// δ after the family-wise (Bonferroni) division, when asked for.
pub fn familywise_delta(inputs: &[RunInput], settings: &AuditSettings) -> f64 {
    let delta = settings.delta();
    if !settings.familywise {
        return delta;
    }
    let claims = inputs
        .iter()
        .filter(|r| r.claim_error_rate.is_some())
        .count();
    delta / claims.max(1) as f64
}

/// K per run: max(candidates, runs sharing the run's held-out split).
pub fn compared_counts(inputs: &[RunInput], settings: &AuditSettings) -> Vec<u64> {
    if settings.same_holdout {
        let all = inputs.len() as u64;
        return inputs.iter().map(|r| r.candidates.max(all)).collect();
    }
    let mut sharing: HashMap<&str, u64> = HashMap::new();
    for input in inputs {
        if let Some(split) = input.holdout_set.as_deref() {
            *sharing.entry(split).or_insert(0) += 1;
        }
    }
    inputs
        .iter()
        .map(|r| {
            let shared = r
                .holdout_set
                .as_deref()
                .and_then(|split| sharing.get(split).copied())
                .unwrap_or(1);
            r.candidates.max(shared)
        })
        .collect()
}

/// Audits every run (in parallel; the result order is the input order).
pub fn audit_runs(inputs: &[RunInput], settings: &AuditSettings) -> Vec<RunResult> {
    audit_runs_owned(inputs.to_vec(), settings)
}

/// [`audit_runs`] for callers that no longer need the inputs: strings are moved, not
/// copied.
pub fn audit_runs_owned(inputs: Vec<RunInput>, settings: &AuditSettings) -> Vec<RunResult> {
    let delta = familywise_delta(&inputs, settings);
    let compared = compared_counts(&inputs, settings);

    // train_needed depends only on the family, δ and the tolerance: solve once per
    // distinct family, in parallel (a sweep over many sizes has many families).
    let started = std::time::Instant::now();
    let mut distinct: HashMap<FamilyId, Family> = HashMap::new();
    for family in inputs.iter().filter_map(|r| r.family) {
        distinct.entry(FamilyId::of(&family)).or_insert(family);
    }
    let train_needed: HashMap<FamilyId, Option<u64>> = distinct
        .into_par_iter()
        .map(|(id, family)| (id, vc::train_needed(&family, settings.tolerance, delta)))
        .collect();
    crate::timing("  train_needed per family", started);

    let mut results: Vec<RunResult> = inputs
        .into_par_iter()
        .zip(compared.into_par_iter())
        .map(|(input, compared)| {
            let context = RunContext {
                compared,
                delta,
                train_needed: input
                    .family
                    .and_then(|f| train_needed.get(&FamilyId::of(&f)).copied().flatten()),
                defer_holdout_needed: true,
            };
            audit_run(input, context, settings)
        })
        .collect();

    // holdout_needed is a search over n (dozens of inversions); sweeps repeat the same
    // (rate, claim, δ/K), so solve each distinct one once, in parallel.
    let started = std::time::Instant::now();
    let key = |r: &RunResult| -> Option<(u64, u64, u64)> {
        match (r.verdict, r.claim_error_rate) {
            (Verdict::Unproven, Some(claim)) if r.holdout_error_rate < claim => Some((
                r.holdout_error_rate.to_bits(),
                claim.to_bits(),
                r.delta.to_bits(),
            )),
            _ => None,
        }
    };
    let distinct: std::collections::HashSet<(u64, u64, u64)> =
        results.iter().filter_map(key).collect();
    let solved: HashMap<(u64, u64, u64), Option<u64>> = distinct
        .into_par_iter()
        .map(|k @ (rate, claim, alpha)| {
            let needed = holdout_needed_for(
                Verdict::Unproven,
                f64::from_bits(rate),
                Some(f64::from_bits(claim)),
                f64::from_bits(alpha),
                settings.holdout_bound,
            );
            (k, needed)
        })
        .collect();
    for result in &mut results {
        if let Some(k) = key(result) {
            result.holdout_needed = solved.get(&k).copied().flatten();
        }
    }
    crate::timing("  holdout_needed per distinct claim", started);
    results
}

/// Counts verdicts and applies the gate.
pub fn summarize(results: &[RunResult], gate: Gate) -> Summary {
    let mut summary = Summary {
        runs: results.len(),
        ..Summary::default()
    };
    for result in results {
        match result.verdict {
            Verdict::Certified => summary.certified += 1,
            Verdict::Unproven => summary.unproven += 1,
            Verdict::Refuted => summary.refuted += 1,
            Verdict::NoClaim => summary.no_claim += 1,
        }
        if result.holdout_set.is_none() && result.candidates == 1 {
            summary.reuse_unchecked += 1;
        }
    }
    let fails = match gate {
        Gate::Unproven => summary.unproven + summary.refuted > 0,
        Gate::Refuted => summary.refuted > 0,
        Gate::Never => false,
    };
    summary.gate = if fails {
        GateResult::Fail
    } else {
        GateResult::Pass
    };
    summary
}

/// A hashable identity of a family and its parameters.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
struct FamilyId(u8, u64, u64, u64);

impl FamilyId {
    fn of(family: &Family) -> FamilyId {
        match *family {
            Family::Ray => FamilyId(0, 0, 0, 0),
            Family::Interval => FamilyId(1, 0, 0, 0),
            Family::Linear { dim } => FamilyId(2, dim, 0, 0),
            Family::Box { dim } => FamilyId(3, dim, 0, 0),
            Family::Stump { features } => FamilyId(4, features, 0, 0),
            Family::Finite { size } => FamilyId(5, size, 0, 0),
            Family::Tree { leaves, features } => FamilyId(6, leaves, features, 0),
            Family::Vc { vc_dim } => FamilyId(7, vc_dim, 0, 0),
            Family::ReluNet {
                weights,
                layers,
                units,
            } => FamilyId(8, weights, layers, units),
            Family::ThresholdNet {
                weights,
                layers,
                units,
            } => FamilyId(9, weights, layers, units),
        }
    }
}
