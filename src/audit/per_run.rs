//! The audit of one run: a pure function of the run, its K and the settings (SPEC §4).

use super::explain;
use super::finding::{Finding, FindingCode};
use super::result::{RunResult, Verdict};
use super::settings::{AuditSettings, HoldoutBound};
use crate::run::{ClaimForm, RunInput};
use crate::theory::{binomial, hoeffding, sample_size, vc};

/// What the audit knows about a run beyond its own row.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct RunContext {
    /// K: models compared on this run's held-out split.
    pub compared: u64,
    /// δ after the family-wise division (before division by K).
    pub delta: f64,
    /// `train_needed` for the run's family at this δ (computed once per family).
    pub train_needed: Option<u64>,
    /// Leave `holdout_needed` (and the explanation, which names it) empty: the
    /// caller fills it once per distinct (rate, claim, δ/K) with
    /// [`holdout_needed_for`], since sweeps repeat them, then writes the explanation
    /// with [`explain::explanation`].
    pub defer_holdout_needed: bool,
    /// Write each finding's sentence. Without it the findings carry their codes and
    /// empty messages: the flat formats print codes only, and formatting the numbers
    /// of a million sentences nobody reads costs more than some of the math
    /// ([`explain::fill_messages`] writes them later for the runs a report shows).
    pub messages: bool,
    /// Other runs of this run's held-out split log a different `holdout_n`.
    pub split_size_mismatch: bool,
}

/// The claim a held-out size is searched for (SPEC §4): only an unproven claim above
/// the observed rate; `holdout_needed` is null otherwise.
pub fn claim_needing_size(verdict: Verdict, rate: f64, claim: Option<f64>) -> Option<f64> {
    match (verdict, claim) {
        (Verdict::Unproven, Some(claim)) if rate < claim => Some(claim),
        _ => None,
    }
}

/// `holdout_needed` (SPEC §4): null unless the claim is unproven and the observed rate
/// is below it.
pub fn holdout_needed_for(
    verdict: Verdict,
    rate: f64,
    claim: Option<f64>,
    delta_per_run: f64,
    bound: HoldoutBound,
) -> Option<u64> {
    let claim = claim_needing_size(verdict, rate, claim)?;
    match bound {
        HoldoutBound::Binomial => sample_size::holdout_needed_binomial(rate, claim, delta_per_run),
        HoldoutBound::Hoeffding => {
            sample_size::holdout_needed_hoeffding(rate, claim, delta_per_run)
        }
    }
}

/// The one-sided (lower, upper) bounds on the true error at level `alpha` from k of n
/// held-out errors (rate ê for Hoeffding), clipped to [0, 1] (SPEC §4).
pub fn one_sided_bounds(k: u64, n: u64, rate: f64, alpha: f64, bound: HoldoutBound) -> (f64, f64) {
    match bound {
        HoldoutBound::Binomial => (
            binomial::lower_bound(k, n, alpha),
            binomial::upper_bound(k, n, alpha),
        ),
        HoldoutBound::Hoeffding => {
            let width = hoeffding::one_sided_width(n, alpha);
            ((rate - width).max(0.0), (rate + width).min(1.0))
        }
    }
}

/// Audits one run.
/// Takes the run by value so its strings move into the result instead of being copied.
pub fn audit_run(input: RunInput, context: RunContext, settings: &AuditSettings) -> RunResult {
    let compared = context.compared.max(1);
    let delta = context.delta;
    let delta_per_run = delta / compared as f64;
    let n = input.holdout_n;
    let k = input.holdout_misclassified.min(n);
    let rate = input.holdout_error_rate;

    let binomial_interval = binomial::interval(k, n, delta_per_run);
    let hoeffding_interval = hoeffding::interval(rate, n, delta_per_run);
    let (lower, upper) = one_sided_bounds(k, n, rate, delta_per_run, settings.holdout_bound);

    let verdict = match input.claim_error_rate {
        None => Verdict::NoClaim,
        Some(claim) if upper <= claim => Verdict::Certified,
        Some(claim) if lower > claim => Verdict::Refuted,
        Some(_) => Verdict::Unproven,
    };

    // Theory bound from the training data: needs a known family, N and E_in.
    let theory = match (input.family, input.train_n, input.train_error_rate) {
        (Some(family), Some(train_n), Some(train_rate)) => {
            let growth_ln = family.ln_growth(train_n.saturating_mul(2));
            let allowance = vc::allowance(&family, train_n, delta);
            Some((growth_ln, allowance, train_rate, train_n))
        }
        _ => None,
    };

    let holdout_needed = if context.defer_holdout_needed {
        None
    } else {
        holdout_needed_for(
            verdict,
            rate,
            input.claim_error_rate,
            delta_per_run,
            settings.holdout_bound,
        )
    };

    let mut findings = Vec::new();
    let mut note = |code: FindingCode| {
        findings.push(Finding {
            code,
            message: String::new(),
        })
    };
    if compared > 1 {
        note(FindingCode::HoldoutReused);
    }
    if binomial_interval.1 - binomial_interval.0 > settings.max_width {
        note(FindingCode::HoldoutSmall);
    }
    match theory {
        Some((_, allowance, train_rate, _)) => {
            if lower - train_rate > allowance {
                note(FindingCode::GapBeyondTheory);
            }
            if train_rate + allowance >= 1.0 {
                note(FindingCode::TheoryVacuous);
            }
        }
        None => note(FindingCode::TheoryUnavailable),
    }
    // Needs only the training size and error, not a family.
    if let (Some(train_n), Some(train_rate)) = (input.train_n, input.train_error_rate) {
        let training_margin = ((1.0 / delta).ln() / (2.0 * train_n as f64)).sqrt();
        if upper < train_rate - training_margin {
            note(FindingCode::HoldoutEasierThanTrain);
        }
    }
    if input.misclassified_derived {
        note(FindingCode::MisclassifiedDerived);
    }
    if let Some(code) = implausible_claim(input.claim_error_rate, input.claim_form, rate) {
        note(code);
    }
    if input.train_n == Some(n) {
        note(FindingCode::HoldoutNEqualsTrainN);
    }
    if context.split_size_mismatch {
        note(FindingCode::SplitSizeMismatch);
    }
    if input.id_repeated {
        note(FindingCode::RunIdRepeated);
    }
    let mut result = RunResult {
        run: input.run,
        source: input.source,
        family: input.family_key,
        train_n: input.train_n,
        train_error_rate: input.train_error_rate,
        holdout_n: n,
        holdout_error_rate: rate,
        holdout_misclassified: k,
        holdout_set: input.holdout_set,
        candidates: compared,
        delta: delta_per_run,
        hoeffding_interval: [hoeffding_interval.0, hoeffding_interval.1],
        binomial_interval: [binomial_interval.0, binomial_interval.1],
        error_upper_bound: upper,
        error_lower_bound: lower,
        certifiable_accuracy: 1.0 - upper,
        vc_dim: input.family.and_then(|f| f.vc_dim()),
        growth_ln: theory.map(|t| t.0),
        vc_allowance: theory.map(|t| t.1),
        vc_bound: theory.map(|(_, allowance, train_rate, _)| (train_rate + allowance).min(1.0)),
        observed_gap: input.train_error_rate.map(|train| rate - train),
        certified_gap_max: input.train_error_rate.map(|train| upper - train),
        claim_error_rate: input.claim_error_rate,
        verdict,
        explanation: String::new(),
        holdout_needed,
        train_needed: context.train_needed,
        findings,
        logged_at: input.logged_at,
        copies: input.copies,
        kept: input.kept,
        model: input.family,
        candidates_logged: input.candidates,
        split_spellings: Vec::new(),
    };
    if context.messages {
        explain::fill_messages(&mut result, settings);
    }
    if !context.defer_holdout_needed {
        result.explanation = explain::explanation(&result);
    }
    result
}

/// How far the observed error and a claim may be apart for the claim to look like
/// the other scale (an error rate written as an accuracy, or the reverse).
const OTHER_SCALE_DISTANCE: f64 = 0.1;

/// The plausibility finding of a claim, if any: one that looks written on the other
/// scale than its column says (closer to the observed error rate than to the observed
/// accuracy, or the reverse, and within [`OTHER_SCALE_DISTANCE`] of it), else a
/// claimed accuracy below one half.
pub(crate) fn implausible_claim(
    claim: Option<f64>,
    form: Option<ClaimForm>,
    rate: f64,
) -> Option<FindingCode> {
    let claim = claim?;
    let claimed_accuracy = 1.0 - claim;
    let near = |value: f64, target: f64, other: f64| {
        (value - target).abs() < (value - other).abs()
            && (value - target).abs() <= OTHER_SCALE_DISTANCE
    };
    match form? {
        ClaimForm::Accuracy | ClaimForm::DefaultAccuracy
            if claimed_accuracy < 0.5 && near(claimed_accuracy, rate, 1.0 - rate) =>
        {
            Some(FindingCode::ClaimLooksLikeErrorRate)
        }
        ClaimForm::ErrorRate if claim > 0.5 && near(claim, 1.0 - rate, rate) => {
            Some(FindingCode::ClaimLooksLikeAccuracy)
        }
        _ if claimed_accuracy < 0.5 => Some(FindingCode::ClaimBelowHalf),
        _ => None,
    }
}
