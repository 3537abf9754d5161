//! Claims under review (SPEC §10): each claim joined to the runs it names, decided
//! from the evidence of its kind, with bounds on the claimed quantity, the method that
//! decided and one sentence of evidence.
//!
//! Every claim compares an upper and a lower bound on a quantity Q with a threshold
//! t: certified when the upper bound is ≤ t, refuted when the lower bound is > t,
//! unproven otherwise. Per kind (E the true error, E_in the logged training error,
//! Δ = E_run − E_baseline, v the claim's value):
//!
//! | kind | Q | t | evidence |
//! |---|---|---|---|
//! | accuracy | E | 1 − v | §4's one-sided bounds at δ/K |
//! | error | E | v | the same |
//! | gap | E − E_in | v | held-out route U − E_in, theory route Ω; with both, each at half the level |
//! | beats | Δ | −v | paired (discordant counts) or unpaired (`theory::comparison`) |
//! | not_worse | Δ | v | the same |
//!
//! α = δ/K with K the claimed run's selection count (δ after `--familywise`, which
//! counts these claims too); a pattern matching M runs decides each at α/M, is
//! certified when all are, refuted when any is, and reports its weakest run.

use std::collections::HashMap;
use std::fmt::Write as _;

use serde::{Deserialize, Serialize};

use super::finding::{Finding, FindingCode};
use super::per_run::one_sided_bounds;
use super::result::{RunResult, Verdict};
use super::settings::{AuditSettings, HoldoutBound};
use crate::claim::{ClaimInput, ClaimKind, PatternIndex};
use crate::decimal::{group_thousands, push_percent};
use crate::error::Problem;
use crate::run::ClaimForm;
use crate::theory::{binomial, comparison, sample_size, vc};

/// How a claim was decided.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ClaimMethod {
    HoldoutBinomial,
    HoldoutHoeffding,
    Theory,
    Paired,
    Unpaired,
}

impl ClaimMethod {
    pub fn as_str(self) -> &'static str {
        match self {
            ClaimMethod::HoldoutBinomial => "holdout_binomial",
            ClaimMethod::HoldoutHoeffding => "holdout_hoeffding",
            ClaimMethod::Theory => "theory",
            ClaimMethod::Paired => "paired",
            ClaimMethod::Unpaired => "unpaired",
        }
    }

    fn holdout(bound: HoldoutBound) -> ClaimMethod {
        match bound {
            HoldoutBound::Binomial => ClaimMethod::HoldoutBinomial,
            HoldoutBound::Hoeffding => ClaimMethod::HoldoutHoeffding,
        }
    }
}

/// Everything the audit says about one claim; field names are SPEC §10's.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ClaimResult {
    pub claim: String,
    /// `file:row` of the claims file.
    pub source: String,
    pub statement: Option<String>,
    pub kind: ClaimKind,
    /// The run identifier or pattern, as written.
    pub run: String,
    pub baseline: Option<String>,
    /// The claim's number, as a fraction.
    pub value: f64,
    pub runs_matched: usize,
    pub method: ClaimMethod,
    /// The level the deciding bounds hold at.
    pub delta: f64,
    /// Bounds on the claimed quantity (E, E − E_in or Δ) of the deciding (weakest)
    /// run.
    pub lower: f64,
    pub upper: f64,
    /// The threshold the quantity is held to (1 − v, v or −v).
    pub threshold: f64,
    pub mcnemar_p: Option<f64>,
    pub verdict: Verdict,
    pub holdout_needed: Option<u64>,
    pub evidence: String,
    /// Findings that suggest a slip (see [`FindingCode::blocks_gate`]): the
    /// plausibility findings of an `accuracy` / `error` claim (SPEC §4's, as for a
    /// claim in a log column), and those of the runs it names. The gate fails on them
    /// unless `--gate-allow` names the code.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub findings: Vec<Finding>,
}

/// Joins every claim to the runs and decides it; fails with every problem found
/// (each with the claims file and row). `delta` is δ after `--familywise`.
pub fn evaluate_claims(
    claims: &[ClaimInput],
    runs: &[RunResult],
    settings: &AuditSettings,
    delta: f64,
) -> Result<Vec<ClaimResult>, Vec<Problem>> {
    let mut by_name: HashMap<&str, Vec<usize>> = HashMap::new();
    for (index, run) in runs.iter().enumerate() {
        by_name.entry(run.run.as_str()).or_default().push(index);
    }
    // Each pattern compiled once and every run matched against all of them at once
    // (an index by literal prefix): the runs each pattern matches, in input order.
    let matching = PatternMatches::of(claims, runs);
    let mut results = Vec::with_capacity(claims.len());
    let mut problems = Vec::new();
    for claim in claims {
        match evaluate(claim, runs, &by_name, &matching, settings, delta) {
            Ok(result) => results.push(result),
            Err(found) => problems.extend(found),
        }
    }
    if problems.is_empty() {
        Ok(results)
    } else {
        Err(problems)
    }
}

/// The runs each pattern of the claims matches, in input order: every pattern
/// compiled once and every run matched against all of them at once (an index by
/// literal prefix, [`PatternIndex`]), not each pattern scanning every run.
struct PatternMatches<'a> {
    /// The distinct patterns, sorted.
    patterns: Vec<&'a str>,
    /// Per pattern, the indices of the runs it matches.
    matched: Vec<Vec<usize>>,
}

impl<'a> PatternMatches<'a> {
    fn of(claims: &'a [ClaimInput], runs: &[RunResult]) -> PatternMatches<'a> {
        let mut patterns: Vec<&str> = claims
            .iter()
            .filter(|c| c.is_pattern())
            .map(|c| c.run.as_str())
            .collect();
        patterns.sort_unstable();
        patterns.dedup();
        let index = PatternIndex::new(&patterns);
        let mut matched: Vec<Vec<usize>> = vec![Vec::new(); patterns.len()];
        if !index.is_empty() {
            for (at, run) in runs.iter().enumerate() {
                index.for_each_match(&run.run, |pattern| matched[pattern].push(at));
            }
        }
        PatternMatches { patterns, matched }
    }

    fn runs_of(&self, pattern: &str) -> &[usize] {
        self.patterns
            .binary_search(&pattern)
            .map_or(&[][..], |at| self.matched[at].as_slice())
    }
}

/// The one run an exact identifier names, or the problem.
fn exact<'a>(
    claim: &ClaimInput,
    column: &str,
    name: &str,
    runs: &'a [RunResult],
    by_name: &HashMap<&str, Vec<usize>>,
) -> Result<&'a RunResult, Problem> {
    match by_name.get(name).map(Vec::as_slice) {
        Some([one]) => Ok(&runs[*one]),
        Some(several) => {
            let sources: Vec<&str> = several.iter().map(|&i| runs[i].source.as_str()).collect();
            Err(Problem::cell(
                &claim.file,
                claim.row,
                column,
                format!(
                    "{column} `{name}` names {} runs ({}); give each run its own identifier",
                    several.len(),
                    sources.join(", ")
                ),
            ))
        }
        None => Err(Problem::cell(
            &claim.file,
            claim.row,
            column,
            format!("{column} `{name}` matches no run in the logs"),
        )),
    }
}

fn evaluate(
    claim: &ClaimInput,
    runs: &[RunResult],
    by_name: &HashMap<&str, Vec<usize>>,
    matching: &PatternMatches<'_>,
    settings: &AuditSettings,
    delta: f64,
) -> Result<ClaimResult, Vec<Problem>> {
    let matched: Vec<&RunResult> = if claim.is_pattern() {
        let matched: Vec<&RunResult> = matching
            .runs_of(&claim.run)
            .iter()
            .map(|&at| &runs[at])
            .collect();
        if matched.is_empty() {
            return Err(vec![Problem::cell(
                &claim.file,
                claim.row,
                "run",
                format!("the pattern `{}` matches no run in the logs", claim.run),
            )]);
        }
        matched
    } else {
        vec![exact(claim, "run", &claim.run, runs, by_name).map_err(|p| vec![p])?]
    };
    let baseline = match &claim.baseline {
        Some(name) => Some(exact(claim, "baseline", name, runs, by_name).map_err(|p| vec![p])?),
        None => None,
    };
    let share = matched.len() as f64;
    let mut decided = Vec::with_capacity(matched.len());
    let mut problems = Vec::new();
    for run in &matched {
        if baseline.is_some_and(|b| std::ptr::eq(b, *run)) {
            // A pattern that also matches the baseline: that pair compares nothing.
            continue;
        }
        match decide(claim, run, baseline, settings, delta, share) {
            Ok(one) => decided.push((*run, one)),
            Err(problem) => problems.push(problem),
        }
    }
    if !problems.is_empty() {
        return Err(problems);
    }
    if decided.is_empty() {
        return Err(vec![Problem::cell(
            &claim.file,
            claim.row,
            "run",
            format!("the pattern `{}` matches only the baseline", claim.run),
        )]);
    }
    // The weakest run decides what is reported: a refuted one if any (the one that
    // breaks the claim most), else the one furthest from being certified.
    let refuted = decided.iter().any(|(_, d)| d.verdict == Verdict::Refuted);
    let weakest = decided
        .iter()
        .filter(|(_, d)| !refuted || d.verdict == Verdict::Refuted)
        .max_by(|a, b| {
            let key = |d: &Decision| if refuted { d.lower } else { d.upper } - d.threshold;
            key(&a.1)
                .partial_cmp(&key(&b.1))
                .unwrap_or(std::cmp::Ordering::Equal)
        })
        .expect("at least one decided run");
    let verdict = if refuted {
        Verdict::Refuted
    } else if decided.iter().all(|(_, d)| d.verdict == Verdict::Certified) {
        Verdict::Certified
    } else {
        Verdict::Unproven
    };
    let (weak_run, weak) = weakest;
    let holdout_needed = if verdict == Verdict::Unproven {
        weak.holdout_needed
    } else {
        None
    };
    let mut evidence = String::new();
    if claim.is_pattern() {
        let certified = decided
            .iter()
            .filter(|(_, d)| d.verdict == Verdict::Certified)
            .count();
        let _ = write!(
            evidence,
            "{}: {certified} of {} runs matching `{}` certified, each at level δ/(K·{}); the {} is {}: ",
            verdict.as_str(),
            decided.len(),
            claim.run,
            decided.len(),
            if refuted { "first to break it" } else { "weakest" },
            weak_run.run
        );
    } else {
        let _ = write!(evidence, "{}: ", verdict.as_str());
    }
    evidence.push_str(&weak.evidence);
    if let Some(needed) = holdout_needed {
        let _ = write!(
            evidence,
            "; {} held-out examples at the same rates would certify it",
            group_thousands(needed)
        );
    }
    let findings = claim_findings(claim, &decided, baseline);
    Ok(ClaimResult {
        findings,
        claim: claim.claim.clone(),
        source: claim.source.clone(),
        statement: claim.statement.clone(),
        kind: claim.kind,
        run: claim.run.clone(),
        baseline: claim.baseline.clone(),
        value: claim.value,
        runs_matched: decided.len(),
        method: weak.method,
        delta: weak.level,
        lower: weak.lower,
        upper: weak.upper,
        threshold: weak.threshold,
        mcnemar_p: weak.mcnemar_p,
        verdict,
        holdout_needed,
        evidence,
    })
}

/// The findings of a claim that suggest a slip: for an `accuracy` / `error` claim,
/// the plausibility finding a log claim of that value would get against each run
/// it names (the first run that gets one is named); for every claim, the findings
/// of the runs it names (and its baseline) that block the gate and do not concern a
/// log column's claim (`holdout_n_equals_train_n`, `split_names_differ_in_case`).
fn claim_findings(
    claim: &ClaimInput,
    decided: &[(&RunResult, Decision)],
    baseline: Option<&RunResult>,
) -> Vec<Finding> {
    let mut findings: Vec<Finding> = Vec::new();
    let mut add = |code: FindingCode, message: String| {
        if !findings.iter().any(|f| f.code == code) {
            findings.push(Finding { code, message });
        }
    };
    let gate_note = |code: FindingCode| {
        format!(
            "; the gate fails on it unless --gate-allow {}",
            code.as_str()
        )
    };
    let form = match claim.kind {
        ClaimKind::Accuracy => Some(ClaimForm::Accuracy),
        ClaimKind::Error => Some(ClaimForm::ErrorRate),
        _ => None,
    };
    if let Some(form) = form {
        for (run, decision) in decided {
            let error = decision.threshold;
            let rate = run.holdout_error_rate;
            let Some(code) = super::per_run::implausible_claim(Some(error), Some(form), rate)
            else {
                continue;
            };
            let mut text = String::new();
            match code {
                FindingCode::ClaimLooksLikeErrorRate => {
                    text.push_str("the claimed accuracy ");
                    pct(&mut text, 1.0 - error);
                    let _ = write!(
                        text,
                        " is close to the observed error rate of {} (",
                        run.run
                    );
                    pct(&mut text, rate);
                    text.push_str("), not to its observed accuracy (");
                    pct(&mut text, 1.0 - rate);
                    text.push_str("): it looks like an error rate written as an accuracy (write the claim's kind as `error`)");
                }
                FindingCode::ClaimLooksLikeAccuracy => {
                    text.push_str("the claimed error rate ");
                    pct(&mut text, error);
                    let _ = write!(text, " is close to the observed accuracy of {} (", run.run);
                    pct(&mut text, 1.0 - rate);
                    text.push_str("): it looks like an accuracy written as an error rate (write the claim's kind as `accuracy`)");
                }
                _ => {
                    text.push_str("the claimed accuracy ");
                    pct(&mut text, 1.0 - error);
                    text.push_str(" is below 50 %, which is usually a slip: an error rate written as an accuracy, an accuracy written as an error, or fractions read with --percent");
                }
            }
            text.push_str(&gate_note(code));
            add(code, text);
        }
    }
    let named = decided.iter().map(|(run, _)| *run).chain(baseline);
    for run in named {
        for finding in &run.findings {
            if !matches!(
                finding.code,
                FindingCode::HoldoutNEqualsTrainN | FindingCode::SplitNamesDifferInCase
            ) {
                continue;
            }
            let message = if finding.message.is_empty() {
                finding.code.as_str().to_string()
            } else {
                finding.message.clone()
            };
            add(finding.code, format!("run `{}`: {message}", run.run));
        }
    }
    findings
}

/// One run's part of a claim.
struct Decision {
    verdict: Verdict,
    method: ClaimMethod,
    level: f64,
    lower: f64,
    upper: f64,
    threshold: f64,
    mcnemar_p: Option<f64>,
    holdout_needed: Option<u64>,
    evidence: String,
}

/// Refuted when the lower bound breaks the threshold, else certified when the upper
/// bound is within it. (Refuted is checked first: for a gap claim the upper bound may
/// come from the theory route and lie below the held-out lower bound, and then the
/// held-out data decide; SPEC §10.)
fn verdict_of(lower: f64, upper: f64, threshold: f64) -> Verdict {
    if lower > threshold {
        Verdict::Refuted
    } else if upper <= threshold {
        Verdict::Certified
    } else {
        Verdict::Unproven
    }
}

/// "4.20 %".
fn pct(out: &mut String, value: f64) {
    push_percent(out, value);
    out.push_str(" %");
}

/// "[3.10 %, 4.20 %]" for a difference or a gap (signed).
fn range(out: &mut String, lower: f64, upper: f64) {
    out.push('[');
    pct(out, lower);
    out.push_str(", ");
    pct(out, upper);
    out.push(']');
}

/// Decides `claim` for one matched `run` (and its baseline); `share` divides the
/// level among the runs a pattern matches.
fn decide(
    claim: &ClaimInput,
    run: &RunResult,
    baseline: Option<&RunResult>,
    settings: &AuditSettings,
    delta: f64,
    share: f64,
) -> Result<Decision, Problem> {
    let alpha = delta / run.candidates.max(1) as f64 / share;
    let bound = settings.holdout_bound;
    let (k, n, rate) = (
        run.holdout_misclassified,
        run.holdout_n,
        run.holdout_error_rate,
    );
    let mut evidence = String::new();
    let level_words = |alpha: f64| format!("level {alpha:.3e}");
    match claim.kind {
        ClaimKind::Accuracy | ClaimKind::Error => {
            let threshold = if claim.kind == ClaimKind::Accuracy {
                crate::decimal::complement(claim.value)
            } else {
                claim.value
            };
            let (lower, upper) = one_sided_bounds(k, n, rate, alpha, bound);
            let verdict = verdict_of(lower, upper, threshold);
            let _ = write!(evidence, "the true error of {} lies in ", run.run);
            range(&mut evidence, lower, upper);
            let _ = write!(
                evidence,
                " ({} bounds on {} of {} held-out examples, {}",
                bound.as_str(),
                group_thousands(k),
                group_thousands(n),
                level_words(alpha)
            );
            if run.candidates > 1 {
                let _ = write!(
                    evidence,
                    " after {} models compared on its split",
                    run.candidates
                );
            }
            evidence.push_str("); the claim needs it ≤ ");
            pct(&mut evidence, threshold);
            let holdout_needed =
                super::per_run::holdout_needed_for(verdict, rate, Some(threshold), alpha, bound);
            if verdict == Verdict::Unproven && rate >= threshold {
                evidence.push_str(", and the observed error ");
                pct(&mut evidence, rate);
                evidence.push_str(" is already at or above it, so no held-out size can certify it");
            }
            Ok(Decision {
                verdict,
                method: ClaimMethod::holdout(bound),
                level: alpha,
                lower,
                upper,
                threshold,
                mcnemar_p: None,
                holdout_needed,
                evidence,
            })
        }
        ClaimKind::Gap => {
            let Some(train_rate) = run.train_error_rate else {
                return Err(Problem::cell(
                    &claim.file,
                    claim.row,
                    "run",
                    format!(
                        "a gap claim needs the training error, and run `{}` ({}) logs none",
                        run.run, run.source
                    ),
                ));
            };
            let threshold = claim.value;
            let theory_family = run.model.filter(|_| run.train_n.is_some());
            // With both routes, each gets half the level (SPEC §10).
            let (alpha_holdout, delta_theory) = match theory_family {
                Some(_) => (alpha / 2.0, delta / share / 2.0),
                None => (alpha, delta / share),
            };
            let (held_lower, held_upper) = one_sided_bounds(k, n, rate, alpha_holdout, bound);
            let (lower, upper_holdout) = (held_lower - train_rate, held_upper - train_rate);
            let upper_theory = theory_family
                .zip(run.train_n)
                .map(|(family, train_n)| vc::allowance(&family, train_n, delta_theory));
            let theory_decides = upper_theory.is_some_and(|t| t < upper_holdout);
            let upper_either = upper_theory.map_or(upper_holdout, |t| t.min(upper_holdout));
            let verdict = verdict_of(lower, upper_either, threshold);
            // Refuted, the held-out route decided: its own bounds are reported.
            let upper = if verdict == Verdict::Refuted {
                upper_holdout
            } else {
                upper_either
            };
            // Refuted outranks certified: the held-out lower bound decides then.
            let (method, level) = if verdict != Verdict::Refuted && theory_decides {
                (ClaimMethod::Theory, delta_theory)
            } else {
                (ClaimMethod::holdout(bound), alpha_holdout)
            };
            let _ = write!(
                evidence,
                "by the held-out route E − E_in of {} lies in ",
                run.run
            );
            range(&mut evidence, lower, upper_holdout);
            let _ = write!(
                evidence,
                " ({}, {})",
                bound.as_str(),
                level_words(alpha_holdout)
            );
            match upper_theory {
                Some(omega) => {
                    evidence.push_str("; by the theory route it is at most Ω = ");
                    pct(&mut evidence, omega);
                    let _ = write!(evidence, " ({})", level_words(delta_theory));
                }
                None => {
                    evidence.push_str("; no theory route (the run's family has no growth bound)")
                }
            }
            evidence.push_str("; the claim needs it ≤ ");
            pct(&mut evidence, threshold);
            match (verdict, method) {
                (Verdict::Refuted, _) if upper_theory.is_some_and(|t| t <= threshold) => evidence.push_str(
                    "; the held-out lower bound breaks the claim that the theory route would certify, so the held-out data contradict the i.i.d. assumption the theory route rests on",
                ),
                (Verdict::Certified, ClaimMethod::Theory) => evidence.push_str("; decided by the theory route"),
                (Verdict::Certified, _) => evidence.push_str("; decided by the held-out route"),
                _ => {}
            }
            let needed_claim = train_rate + threshold;
            let holdout_needed = super::per_run::holdout_needed_for(
                verdict,
                rate,
                Some(needed_claim).filter(|c| *c < 1.0),
                alpha_holdout,
                bound,
            );
            Ok(Decision {
                verdict,
                method,
                level,
                lower,
                upper,
                threshold,
                mcnemar_p: None,
                holdout_needed,
                evidence,
            })
        }
        ClaimKind::Beats | ClaimKind::NotWorse => {
            let base = baseline.expect("comparisons have a baseline (checked when read)");
            let threshold = if claim.kind == ClaimKind::Beats {
                -claim.value
            } else {
                claim.value
            };
            match (claim.run_only_errors, claim.baseline_only_errors) {
                (Some(r), Some(s)) => {
                    paired(claim, run, base, r, s, alpha, threshold).map(|mut d| {
                        d.evidence = format!("{} vs {}: {}", run.run, base.run, d.evidence);
                        d
                    })
                }
                _ => Ok(unpaired(run, base, alpha, threshold, bound)),
            }
        }
    }
}

/// A paired comparison from the discordant counts, after checking them against the
/// logs: both runs scored on one split of the same size, r ≤ k_run, s ≤ k_base and
/// k_run − r = k_base − s (the examples both got wrong).
fn paired(
    claim: &ClaimInput,
    run: &RunResult,
    base: &RunResult,
    r: u64,
    s: u64,
    alpha: f64,
    threshold: f64,
) -> Result<Decision, Problem> {
    let disagree = |message: String| Problem::row(&claim.file, claim.row, message);
    let same_split = run.holdout_set.is_some() && run.holdout_set == base.holdout_set;
    if !same_split || run.holdout_n != base.holdout_n {
        return Err(disagree(format!(
            "discordant counts describe examples both runs were scored on, but `{}` was evaluated on {} ({} examples) and `{}` on {} ({} examples); leave the counts out for an unpaired comparison",
            run.run,
            run.holdout_set.as_deref().map_or("an unnamed split".to_string(), |s| format!("split `{s}`")),
            run.holdout_n,
            base.run,
            base.holdout_set.as_deref().map_or("an unnamed split".to_string(), |s| format!("split `{s}`")),
            base.holdout_n
        )));
    }
    let (k_run, k_base) = (run.holdout_misclassified, base.holdout_misclassified);
    if r > k_run || s > k_base || k_run - r != k_base - s {
        return Err(disagree(format!(
            "the counts disagree with the logs: run_only_errors = {r} and baseline_only_errors = {s}, but `{}` made {k_run} errors and `{}` {k_base}, so both would have got {} and {} examples wrong (run_only_errors ≤ {k_run}, baseline_only_errors ≤ {k_base}, and the two differences must be equal)",
            run.run,
            base.run,
            k_run as i128 - r as i128,
            k_base as i128 - s as i128
        )));
    }
    let n = run.holdout_n;
    let bounds = comparison::paired_bounds(r, s, n, alpha);
    let m = r + s;
    let p = comparison::mcnemar_p(r, m);
    let verdict = verdict_of(bounds.delta_lo, bounds.delta_hi, threshold);
    let mut evidence = format!(
        "paired on {} examples ({} only the run got wrong, {} only the baseline), Δ = E_run − E_base lies in ",
        group_thousands(n),
        group_thousands(r),
        group_thousands(s)
    );
    range(&mut evidence, bounds.delta_lo, bounds.delta_hi);
    let _ = write!(
        evidence,
        " (Clopper–Pearson on both rates, level {alpha:.3e}); the claim needs Δ ≤ "
    );
    pct(&mut evidence, threshold);
    let _ = write!(evidence, "; one-sided McNemar p = {p:.3e}");
    // Held-out examples needed: more paired examples at the same discordant rates,
    // counts scaled and rounded against the claim (the run's up, the baseline's down);
    // the exact smallest size, walking the sawtooth the rounding makes.
    let holdout_needed = (verdict == Verdict::Unproven)
        .then(|| comparison::paired_holdout_needed(r, s, n, alpha, threshold))
        .flatten();
    Ok(Decision {
        verdict,
        method: ClaimMethod::Paired,
        level: alpha,
        lower: bounds.delta_lo,
        upper: bounds.delta_hi,
        threshold,
        mcnemar_p: Some(p),
        holdout_needed,
        evidence,
    })
}

/// An unpaired comparison: each run's one-sided bounds at α/2 (a union bound).
fn unpaired(
    run: &RunResult,
    base: &RunResult,
    alpha: f64,
    threshold: f64,
    bound: HoldoutBound,
) -> Decision {
    let half = alpha / 2.0;
    let (run_lower, run_upper) = one_sided_bounds(
        run.holdout_misclassified,
        run.holdout_n,
        run.holdout_error_rate,
        half,
        bound,
    );
    let (base_lower, base_upper) = one_sided_bounds(
        base.holdout_misclassified,
        base.holdout_n,
        base.holdout_error_rate,
        half,
        bound,
    );
    let (lower, upper) = comparison::unpaired_bounds(run_lower, run_upper, base_lower, base_upper);
    let verdict = verdict_of(lower, upper, threshold);
    let split_words = |r: &RunResult| match &r.holdout_set {
        Some(split) => format!("split `{split}`, {} examples", group_thousands(r.holdout_n)),
        None => format!(
            "an unnamed split, {} examples",
            group_thousands(r.holdout_n)
        ),
    };
    let same_data = run.holdout_set.is_some()
        && run.holdout_set == base.holdout_set
        && run.holdout_n == base.holdout_n;
    let known_apart = run.holdout_n != base.holdout_n
        || (run.holdout_set.is_some()
            && base.holdout_set.is_some()
            && run.holdout_set != base.holdout_set);
    let why_unpaired = if same_data || !known_apart {
        "no discordant counts on one split".to_string()
    } else {
        format!(
            "the runs were scored on different held-out data: {} and {}",
            split_words(run),
            split_words(base)
        )
    };
    let mut evidence = format!(
        "{} vs {}, unpaired ({why_unpaired}): Δ = E_run − E_base lies in ",
        run.run, base.run
    );
    range(&mut evidence, lower, upper);
    evidence.push_str(" (E_run in ");
    range(&mut evidence, run_lower, run_upper);
    evidence.push_str(", E_base in ");
    range(&mut evidence, base_lower, base_upper);
    let _ = write!(
        evidence,
        ", {} bounds at level {half:.3e} each); the claim needs Δ ≤ ",
        bound.as_str()
    );
    pct(&mut evidence, threshold);
    // Held-out examples needed: both runs on sets of one size at their observed
    // rates, the run's errors rounded up and the baseline's down.
    let (rate_run, rate_base) = (run.holdout_error_rate, base.holdout_error_rate);
    let holdout_needed = (verdict == Verdict::Unproven && rate_run - rate_base < threshold)
        .then(|| {
            // The size for both sets may lie below either present size: search from 1.
            smallest_size(1, |size| {
                let k_run = sample_size::errors_at(rate_run, size).min(size);
                let k_base = ((rate_base * size as f64).floor() as u64).min(size);
                let (_, u) = one_sided_bounds(k_run, size, k_run as f64 / size as f64, half, bound);
                let (l, _) =
                    one_sided_bounds(k_base, size, k_base as f64 / size as f64, half, bound);
                u - l <= threshold
            })
        })
        .flatten();
    Decision {
        verdict,
        method: ClaimMethod::Unpaired,
        level: alpha,
        lower,
        upper,
        threshold,
        mcnemar_p: None,
        holdout_needed,
        evidence,
    }
}

/// The largest size the searches for held-out examples needed try.
const SIZE_CAP: u64 = 1 << 40;

/// The smallest size above `from` (a size that fails) at which `passes` holds, found
/// by doubling and then bisection between a failing and a passing size (the counts
/// are rounded at each size, so the condition can be slightly non-monotone; the size
/// found passes and the one below it fails). None when no size up to 2⁴⁰ passes.
fn smallest_size(from: u64, passes: impl Fn(u64) -> bool) -> Option<u64> {
    let mut failing = from.max(1);
    let mut passing = failing;
    loop {
        passing = passing.saturating_mul(2);
        if passing > SIZE_CAP {
            return None;
        }
        if passes(passing) {
            break;
        }
        failing = passing;
    }
    while passing - failing > 1 {
        let middle = failing + (passing - failing) / 2;
        if passes(middle) {
            passing = middle;
        } else {
            failing = middle;
        }
    }
    Some(passing)
}

/// Exposed for the reference tests: the unpaired bounds of two runs' counts at total
/// level `alpha` with the exact binomial bounds.
pub fn unpaired_binomial(
    k_run: u64,
    n_run: u64,
    k_base: u64,
    n_base: u64,
    alpha: f64,
) -> (f64, f64) {
    let half = alpha / 2.0;
    comparison::unpaired_bounds(
        binomial::lower_bound(k_run, n_run, half),
        binomial::upper_bound(k_run, n_run, half),
        binomial::lower_bound(k_base, n_base, half),
        binomial::upper_bound(k_base, n_base, half),
    )
}
