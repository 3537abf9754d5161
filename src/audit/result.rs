//! The audit's result types. Every report format is a view of these.

use serde::{Deserialize, Serialize};

pub use super::finding::{Finding, FindingCode};
use super::settings::Gate;

/// The verdict on a run's claim (SPEC §4).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Verdict {
    Certified,
    Unproven,
    Refuted,
    NoClaim,
}

impl Verdict {
    pub fn as_str(self) -> &'static str {
        match self {
            Verdict::Certified => "certified",
            Verdict::Unproven => "unproven",
            Verdict::Refuted => "refuted",
            Verdict::NoClaim => "no_claim",
        }
    }

    /// Sort key: worst first.
    pub fn severity(self) -> u8 {
        match self {
            Verdict::Refuted => 0,
            Verdict::Unproven => 1,
            Verdict::Certified => 2,
            Verdict::NoClaim => 3,
        }
    }
}

/// Everything the audit says about one run; field names are SPEC §7's.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct RunResult {
    pub run: String,
    pub source: String,
    pub family: Option<String>,
    pub train_n: Option<u64>,
    pub train_error_rate: Option<f64>,
    pub holdout_n: u64,
    pub holdout_error_rate: f64,
    pub holdout_misclassified: u64,
    pub holdout_set: Option<String>,
    /// K: the number of models compared on this run's held-out split (after grouping).
    pub candidates: u64,
    /// The failure probability each held-out bound of this run is computed at: δ/K
    /// (δ already divided by the number of claims under `--familywise`).
    pub delta: f64,
    pub hoeffding_interval: [f64; 2],
    pub binomial_interval: [f64; 2],
    pub error_upper_bound: f64,
    pub error_lower_bound: f64,
    /// 1 − U: the strongest accuracy claim the run's evidence certifies.
    pub certifiable_accuracy: f64,
    pub vc_dim: Option<u64>,
    pub growth_ln: Option<f64>,
    pub vc_allowance: Option<f64>,
    pub vc_bound: Option<f64>,
    pub observed_gap: Option<f64>,
    pub certified_gap_max: Option<f64>,
    pub claim_error_rate: Option<f64>,
    pub verdict: Verdict,
    /// One sentence saying why the verdict is what it is.
    pub explanation: String,
    pub holdout_needed: Option<u64>,
    pub train_needed: Option<u64>,
    pub findings: Vec<Finding>,
    pub logged_at: Option<String>,
    /// Sources of identical runs read elsewhere and set aside (a copied log).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub copies: Vec<String>,
    /// The `--keep` columns, as an object of name → text.
    #[serde(default, skip_serializing_if = "Vec::is_empty", with = "kept_columns")]
    pub kept: Vec<(String, Option<String>)>,
    /// The resolved family, for claims about the generalization gap (the theory
    /// route needs Ω at their own level). Not written out: `family` names it.
    #[serde(skip)]
    pub model: Option<crate::theory::growth::Family>,
    /// `candidates` as logged, before the runs sharing the split were counted (the
    /// wear history of a split counts K as it grew). Not written out.
    #[serde(skip)]
    pub candidates_logged: u64,
    /// Every spelling of the run's split when other runs spell it in another case
    /// (finding `split_names_differ_in_case`); empty otherwise. Not written out: the
    /// split entry names them.
    #[serde(skip)]
    pub split_spellings: Vec<String>,
}

/// The order reports list runs in, worst first: refuted, unproven, certified, no
/// claim; within a verdict, the largest excess of the upper bound over the claim
/// first; ties by run name and source, so that every way of selecting the worst runs
/// lists the same runs in the same order.
pub fn worst_first(a: &RunResult, b: &RunResult) -> std::cmp::Ordering {
    a.verdict
        .severity()
        .cmp(&b.verdict.severity())
        .then_with(|| {
            let excess = |r: &RunResult| r.error_upper_bound - r.claim_error_rate.unwrap_or(1.0);
            excess(b)
                .partial_cmp(&excess(a))
                .unwrap_or(std::cmp::Ordering::Equal)
        })
        .then_with(|| a.run.cmp(&b.run))
        .then_with(|| a.source.cmp(&b.source))
}

/// Verdict counts and the gate result.
#[derive(Clone, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct Summary {
    pub runs: usize,
    pub certified: usize,
    pub unproven: usize,
    pub refuted: usize,
    pub no_claim: usize,
    /// Rows read from the inputs (audited plus skipped plus copies set aside).
    pub rows_read: usize,
    /// Rows skipped under `--lenient`: bad rows, plus every row of a log skipped
    /// whole.
    pub rows_skipped: usize,
    /// Files in folders that are not logs, plus logs skipped under `--lenient`.
    pub files_skipped: usize,
    /// Runs read more than once and counted once: rows of files identical to an
    /// earlier file, and runs equal in every canonical field to an earlier run of the
    /// same identifier (the kept run lists their sources in `copies`).
    pub copies_set_aside: usize,
    /// Runs whose held-out split is unknown, so reuse could not be checked.
    pub reuse_unchecked: usize,
    /// Runs with a claim and a finding that fails the gate (a slip of scale or of
    /// column; see [`FindingCode::blocks_gate`]) not allowed by `--gate-allow`.
    pub gate_findings: usize,
    /// Claims of the claims files (SPEC §10), by verdict.
    pub claims: usize,
    pub claims_certified: usize,
    pub claims_unproven: usize,
    pub claims_refuted: usize,
    /// Claims of the claims files with a finding that fails the gate (see
    /// [`crate::audit::claims::ClaimResult::findings`]) not allowed by `--gate-allow`.
    #[serde(default)]
    pub claim_gate_findings: usize,
    /// Rows skipped under `--lenient` that carried a claim (a claim cell, or
    /// `--claim-accuracy`): a claim the audit could not read fails the gate.
    #[serde(default)]
    pub claims_skipped: usize,
    pub gate: GateResult,
}

impl Summary {
    /// Counts one audited run; `gate_allow` are the codes `--gate-allow` names.
    pub fn count(&mut self, result: &RunResult, gate_allow: &[FindingCode]) {
        self.runs += 1;
        if result.verdict != Verdict::NoClaim
            && result
                .findings
                .iter()
                .any(|f| f.code.blocks_gate() && !gate_allow.contains(&f.code))
        {
            self.gate_findings += 1;
        }
        match result.verdict {
            Verdict::Certified => self.certified += 1,
            Verdict::Unproven => self.unproven += 1,
            Verdict::Refuted => self.refuted += 1,
            Verdict::NoClaim => self.no_claim += 1,
        }
        if result.holdout_set.is_none() && result.candidates == 1 {
            self.reuse_unchecked += 1;
        }
    }

    /// Counts one claim of a claims file; `gate_allow` are the codes `--gate-allow`
    /// names.
    pub fn count_claim(
        &mut self,
        verdict: Verdict,
        findings: &[Finding],
        gate_allow: &[FindingCode],
    ) {
        self.claims += 1;
        if slip(findings, gate_allow) {
            self.claim_gate_findings += 1;
        }
        match verdict {
            Verdict::Certified => self.claims_certified += 1,
            Verdict::Unproven | Verdict::NoClaim => self.claims_unproven += 1,
            Verdict::Refuted => self.claims_refuted += 1,
        }
    }

    /// Sets `gate` from the counts (runs' claims and the claims files' alike): it
    /// fails exactly when [`gate_fails_on_run`] or [`gate_fails_on_claim`] holds for
    /// some run or claim.
    pub fn apply_gate(&mut self, gate: Gate) {
        let (unproven, refuted) = (
            self.unproven + self.claims_unproven,
            self.refuted + self.claims_refuted,
        );
        let slips = self.gate_findings + self.claim_gate_findings + self.claims_skipped;
        let fails = match gate {
            Gate::Unproven => unproven + refuted + slips > 0,
            Gate::Refuted => refuted + slips > 0,
            Gate::Never => false,
        };
        self.gate = if fails {
            GateResult::Fail
        } else {
            GateResult::Pass
        };
    }
}

/// Whether `gate` fails on this run: a run with a claim that is not certified
/// (`unproven`) or refuted (`refuted`), or whose findings suggest a slip not allowed
/// by `gate_allow`. Runs without a claim never fail it.
pub fn gate_fails_on_run(run: &RunResult, gate: Gate, gate_allow: &[FindingCode]) -> bool {
    if run.verdict == Verdict::NoClaim {
        return false;
    }
    let slip = run
        .findings
        .iter()
        .any(|f| f.code.blocks_gate() && !gate_allow.contains(&f.code));
    match gate {
        Gate::Unproven => run.verdict != Verdict::Certified || slip,
        Gate::Refuted => run.verdict == Verdict::Refuted || slip,
        Gate::Never => false,
    }
}

/// Whether `gate` fails on a claim of a claims file with this verdict and these
/// findings: not certified (`unproven`) or refuted (`refuted`), or with a finding
/// that suggests a slip not allowed by `gate_allow`.
pub fn gate_fails_on_claim(
    verdict: Verdict,
    findings: &[Finding],
    gate: Gate,
    gate_allow: &[FindingCode],
) -> bool {
    let slip = slip(findings, gate_allow);
    match gate {
        Gate::Unproven => verdict != Verdict::Certified || slip,
        Gate::Refuted => verdict == Verdict::Refuted || slip,
        Gate::Never => false,
    }
}

/// Whether a finding fails the gate, not allowed by `gate_allow`.
fn slip(findings: &[Finding], gate_allow: &[FindingCode]) -> bool {
    findings
        .iter()
        .any(|f| f.code.blocks_gate() && !gate_allow.contains(&f.code))
}

/// What fails the gate on a run or claim, named first in reports: the first
/// finding that fails it when the verdict alone would pass, else the verdict.
pub fn gate_reason<'a>(
    verdict: Verdict,
    findings: &'a [Finding],
    gate: Gate,
    gate_allow: &[FindingCode],
) -> Result<&'a Finding, Verdict> {
    let verdict_fails = match gate {
        Gate::Unproven => verdict != Verdict::Certified,
        Gate::Refuted => verdict == Verdict::Refuted,
        Gate::Never => false,
    };
    match findings
        .iter()
        .find(|f| f.code.blocks_gate() && !gate_allow.contains(&f.code))
    {
        Some(finding) if !verdict_fails => Ok(finding),
        _ => Err(verdict),
    }
}

#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum GateResult {
    #[default]
    Pass,
    Fail,
}

/// `kept` written as a JSON object in the order asked, and read back.
mod kept_columns {
    use serde::ser::SerializeMap;
    use serde::{Deserialize, Deserializer, Serializer};

    pub fn serialize<S: Serializer>(
        kept: &[(String, Option<String>)],
        serializer: S,
    ) -> Result<S::Ok, S::Error> {
        let mut map = serializer.serialize_map(Some(kept.len()))?;
        for (name, value) in kept {
            map.serialize_entry(name, value)?;
        }
        map.end()
    }

    pub fn deserialize<'de, D: Deserializer<'de>>(
        deserializer: D,
    ) -> Result<Vec<(String, Option<String>)>, D::Error> {
        let map = serde_json::Map::<String, serde_json::Value>::deserialize(deserializer)?;
        Ok(map
            .into_iter()
            .map(|(name, value)| {
                let text = match value {
                    serde_json::Value::Null => None,
                    serde_json::Value::String(text) => Some(text),
                    other => Some(other.to_string()),
                };
                (name, text)
            })
            .collect())
    }
}
