//! The sentences of an audit: why each verdict is what it is, and what each finding
//! means. Both are written from the run's result and the settings alone, so a
//! report can write them for the runs it shows even when the audit left them out
//! (the streamed formats carry finding codes only, and a table of a million runs
//! shows the worst few).
//!
//! Numbers are written as the reports write them (`decimal::push_percent`), so a
//! sentence and the table cell beside it never disagree.

use std::fmt::Write;

use super::finding::FindingCode;
use super::result::{RunResult, Verdict};
use super::settings::AuditSettings;
use crate::decimal::{group_thousands, push_percent};

/// "4.20 %".
fn percent(out: &mut String, rate: f64) {
    push_percent(out, rate);
    out.push_str(" %");
}

/// The sentence explaining `run`'s verdict. Needs the run's bounds, claim, K and
/// `holdout_needed`.
pub fn explanation(run: &RunResult) -> String {
    let mut text = String::with_capacity(200);
    let certifiable = |text: &mut String| {
        text.push_str("; the evidence certifies up to ");
        percent(text, run.certifiable_accuracy);
        text.push_str(" accuracy");
    };
    let Some(claim) = run.claim_error_rate else {
        text.push_str("no claim");
        certifiable(&mut text);
        return text;
    };
    match run.verdict {
        Verdict::Certified => {
            text.push_str("certified: the upper bound ");
            percent(&mut text, run.error_upper_bound);
            text.push_str(" is within the claimed error ");
            percent(&mut text, claim);
            if run.candidates > 1 {
                let _ = write!(
                    text,
                    ", after correcting for {} models compared on the split",
                    run.candidates
                );
            }
        }
        Verdict::Refuted => {
            text.push_str("refuted: even the lower bound ");
            percent(&mut text, run.error_lower_bound);
            text.push_str(" exceeds the claimed error ");
            percent(&mut text, claim);
        }
        Verdict::Unproven | Verdict::NoClaim => {
            text.push_str("unproven: the upper bound ");
            percent(&mut text, run.error_upper_bound);
            text.push_str(" exceeds the claimed error ");
            percent(&mut text, claim);
            if run.holdout_error_rate >= claim {
                text.push_str(", and the observed error ");
                percent(&mut text, run.holdout_error_rate);
                text.push_str(
                    " is already at or above the claim, so no held-out size can certify it",
                );
            } else {
                text.push_str(" but the lower bound ");
                percent(&mut text, run.error_lower_bound);
                text.push_str(" does not");
                if let Some(needed) = run.holdout_needed {
                    text.push_str("; ");
                    text.push_str(&group_thousands(needed));
                    text.push_str(" held-out examples at the same error rate would certify it");
                }
            }
        }
    }
    certifiable(&mut text);
    text
}

/// The sentence for one finding of `run`.
pub fn finding_message(run: &RunResult, code: FindingCode, settings: &AuditSettings) -> String {
    let mut text = String::new();
    let gate_note = |text: &mut String| {
        let _ = write!(
            text,
            "; the gate fails on it unless --gate-allow {}",
            code.as_str()
        );
    };
    match code {
        FindingCode::HoldoutReused => {
            let _ = write!(
                text,
                "{k} models were compared on this held-out split, so each bound holds at level δ/{k} = {:.3e}",
                run.delta,
                k = run.candidates
            );
        }
        FindingCode::HoldoutSmall => {
            let width = run.binomial_interval[1] - run.binomial_interval[0];
            let _ = write!(
                text,
                "the two-sided binomial interval is {:.1} points wide (limit {:.1}); {} held-out examples are too few for a precise estimate",
                width * 100.0,
                settings.max_width * 100.0,
                run.holdout_n
            );
        }
        FindingCode::GapBeyondTheory => {
            let _ = write!(
                text,
                "even the lower bound {:.4} exceeds training error {:.4} by more than the VC allowance {:.4}: suspect distribution shift, leakage or wrong family parameters",
                run.error_lower_bound,
                run.train_error_rate.unwrap_or(f64::NAN),
                run.vc_allowance.unwrap_or(f64::NAN)
            );
        }
        FindingCode::TheoryVacuous => {
            let sum =
                run.train_error_rate.unwrap_or(f64::NAN) + run.vc_allowance.unwrap_or(f64::NAN);
            let _ = write!(
                text,
                "training error plus VC allowance is {sum:.3}, at least 1, so the VC bound is 1 and the training data alone guarantee nothing; {} would need about {} training examples for an allowance of {}",
                run.family.as_deref().unwrap_or("this family"),
                run.train_needed
                    .map(crate::decimal::group_thousands)
                    .unwrap_or_else(|| "an unbounded number of".to_string()),
                settings.tolerance
            );
        }
        FindingCode::TheoryUnavailable => {
            text.push_str("no VC bound: ");
            match run.family.as_deref() {
                None => text.push_str("no model family is logged"),
                Some(key) if !crate::theory::growth::is_known_key(key) => {
                    text.push_str(&crate::suggest::unknown_family_sentence(key));
                }
                Some(_) => text.push_str("the training size or training error is not logged"),
            }
        }
        FindingCode::HoldoutEasierThanTrain => {
            // δ before the division by K (family-wise when asked for).
            let delta = run.delta * run.candidates as f64;
            let train_rate = run.train_error_rate.unwrap_or(f64::NAN);
            let margin = run
                .train_n
                .map(|n| ((1.0 / delta).ln() / (2.0 * n as f64)).sqrt())
                .unwrap_or(f64::NAN);
            let _ = write!(
                text,
                "held-out error is significantly below training error (upper bound {:.4} < {train_rate:.4} − {margin:.4}): check the split, the logging, or leakage into the held-out set",
                run.error_upper_bound
            );
        }
        FindingCode::MisclassifiedDerived => {
            let _ = write!(
                text,
                "the held-out count {} was derived as round(rate × n) from the logged rate; the binomial bound uses it",
                run.holdout_misclassified
            );
        }
        FindingCode::ClaimBelowHalf => {
            let claim = run.claim_error_rate.unwrap_or(f64::NAN);
            text.push_str("the claimed accuracy ");
            percent(&mut text, 1.0 - claim);
            text.push_str(" is below 50 %, which is usually a slip: an error rate written as an accuracy, or fractions read with --percent");
            gate_note(&mut text);
        }
        FindingCode::ClaimLooksLikeErrorRate => {
            let claim = run.claim_error_rate.unwrap_or(f64::NAN);
            text.push_str("the claimed accuracy ");
            percent(&mut text, 1.0 - claim);
            text.push_str(" is close to the observed error rate ");
            percent(&mut text, run.holdout_error_rate);
            text.push_str(", not to the observed accuracy ");
            percent(&mut text, 1.0 - run.holdout_error_rate);
            text.push_str(": it looks like an error rate written as an accuracy (log it as claimed_error_rate)");
            gate_note(&mut text);
        }
        FindingCode::ClaimLooksLikeAccuracy => {
            let claim = run.claim_error_rate.unwrap_or(f64::NAN);
            text.push_str("the claimed error rate ");
            percent(&mut text, claim);
            text.push_str(" is close to the observed accuracy ");
            percent(&mut text, 1.0 - run.holdout_error_rate);
            text.push_str(
                ": it looks like an accuracy written as an error rate (log it as claimed_accuracy)",
            );
            gate_note(&mut text);
        }
        FindingCode::RunIdRepeated => {
            let _ = write!(
                text,
                "another run is logged under the identifier `{}` with different values: the identifier names more than one run (claims that name it cannot be joined); give each run its own",
                run.run
            );
        }
        FindingCode::SplitSizeMismatch => {
            // Said in full once, in the split's entry; each run only points there.
            let _ = write!(
                text,
                "other runs of the held-out split `{}` log another size than this run's {} (see the split)",
                run.holdout_set.as_deref().unwrap_or(""),
                group_thousands(run.holdout_n)
            );
        }
        FindingCode::SplitNamesDifferInCase => {
            let split = run.holdout_set.as_deref().unwrap_or("");
            let _ = write!(
                text,
                "the held-out split `{split}` is also spelled {} by other runs: names that differ only in case are counted as separate splits, so K counts fewer models than may have been compared on one split; spell the split one way",
                context_spellings(run)
            );
            gate_note(&mut text);
        }
        FindingCode::HoldoutNEqualsTrainN => {
            let _ = write!(
                text,
                "the held-out size equals the training size ({}): the two counts may be one set logged twice, or a column mapped to the wrong one",
                run.holdout_n
            );
            gate_note(&mut text);
        }
    }
    text
}

/// The other spellings of `run`'s split, as "`a`, `b`" (from the finding's context,
/// which the audit stores in `split_spellings`).
fn context_spellings(run: &RunResult) -> String {
    let split = run.holdout_set.as_deref().unwrap_or("");
    let others: Vec<String> = run
        .split_spellings
        .iter()
        .filter(|spelling| spelling.as_str() != split)
        .map(|spelling| format!("`{spelling}`"))
        .collect();
    if others.is_empty() {
        "differently".to_string()
    } else {
        others.join(", ")
    }
}

/// The sentence of one of `run`'s findings: its message, or written now when a
/// codes-only audit left it empty.
pub fn finding_sentence<'a>(
    run: &RunResult,
    finding: &'a super::Finding,
    settings: &AuditSettings,
) -> std::borrow::Cow<'a, str> {
    if finding.message.is_empty() {
        std::borrow::Cow::Owned(finding_message(run, finding.code, settings))
    } else {
        std::borrow::Cow::Borrowed(&finding.message)
    }
}

/// Writes every finding's sentence of `run` (those left empty by a codes-only audit).
pub fn fill_messages(run: &mut RunResult, settings: &AuditSettings) {
    for index in 0..run.findings.len() {
        if run.findings[index].message.is_empty() {
            let message = finding_message(run, run.findings[index].code, settings);
            run.findings[index].message = message;
        }
    }
}
