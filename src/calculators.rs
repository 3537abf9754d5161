//! The calculators (`gapcert plan`, `growth`, `families`): checked inputs in, a
//! serialisable result out, which `report::calculators` renders. The same functions
//! serve the Python package's calculators.

use num_bigint::BigUint;
use serde::{Serialize, Serializer};

use crate::error::Error;
use crate::options::{check_confidence, check_fraction, check_positive};
use crate::theory::growth::{self, Family, FamilyParams};
use crate::theory::{reuse, sample_size, vc};

/// `gapcert plan holdout`: held-out examples needed to certify a claim.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct HoldoutPlan {
    pub error_rate: f64,
    pub claim_error_rate: f64,
    pub candidates: u64,
    pub confidence: f64,
    pub delta_per_run: f64,
    pub holdout_needed_binomial: Option<u64>,
    pub holdout_needed_hoeffding: Option<u64>,
    /// The accuracy as given (the claim is its complement).
    #[serde(skip)]
    pub claim_accuracy: f64,
}

/// Plans the held-out size for an observed `error_rate` and a claimed accuracy, with
/// `candidates` models compared on the split.
pub fn plan_holdout(
    error_rate: f64,
    claim_accuracy: f64,
    candidates: u64,
    confidence: f64,
) -> Result<HoldoutPlan, Error> {
    let delta = check_confidence(confidence)?;
    check_fraction("--error-rate", error_rate)?;
    check_fraction("--claim-accuracy", claim_accuracy)?;
    if candidates == 0 {
        return Err(Error::Usage("--candidates must be at least 1".into()));
    }
    let claim = crate::decimal::complement(claim_accuracy);
    let alpha = delta / candidates as f64;
    Ok(HoldoutPlan {
        error_rate,
        claim_error_rate: claim,
        candidates,
        confidence,
        delta_per_run: alpha,
        holdout_needed_binomial: sample_size::holdout_needed_binomial(error_rate, claim, alpha),
        holdout_needed_hoeffding: sample_size::holdout_needed_hoeffding(error_rate, claim, alpha),
        claim_accuracy,
    })
}

/// `gapcert plan reuse`: how many models a held-out split can be compared on before a
/// best run's claim stops being certified (SPEC §11).
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ReusePlan {
    pub holdout_n: u64,
    pub error_rate: f64,
    /// k = ⌈E·N⌉ errors.
    pub holdout_misclassified: u64,
    pub claim_error_rate: f64,
    pub confidence: f64,
    /// The largest K that still certifies the claim (exact binomial); null when even
    /// K = 1 fails; capped at 10¹².
    pub max_candidates: Option<u64>,
    /// Hoeffding's closed form K ≤ δ·exp(2N(c − ê)²); null when even K = 1 fails.
    pub hoeffding_max_candidates: Option<u64>,
    #[serde(skip)]
    pub claim_accuracy: f64,
}

/// Plans the reuse of a held-out split of `holdout_n` examples on which the best run
/// errs at `error_rate`, for a claimed accuracy.
pub fn plan_reuse(
    holdout_n: u64,
    error_rate: f64,
    claim_accuracy: f64,
    confidence: f64,
) -> Result<ReusePlan, Error> {
    let delta = check_confidence(confidence)?;
    check_fraction("--error-rate", error_rate)?;
    check_fraction("--claim-accuracy", claim_accuracy)?;
    if holdout_n == 0 {
        return Err(Error::Usage("--holdout-n must be at least 1".into()));
    }
    let claim = crate::decimal::complement(claim_accuracy);
    let k = sample_size::errors_at(error_rate, holdout_n).min(holdout_n);
    Ok(ReusePlan {
        holdout_n,
        error_rate,
        holdout_misclassified: k,
        claim_error_rate: claim,
        confidence,
        max_candidates: reuse::max_candidates_binomial(k, holdout_n, claim, delta),
        hoeffding_max_candidates: reuse::max_candidates_hoeffding(
            error_rate, holdout_n, claim, delta,
        ),
        claim_accuracy,
    })
}

/// `gapcert plan train`: training examples for the VC allowance to reach a tolerance.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct TrainPlan {
    pub family: &'static str,
    pub vc_dim: Option<u64>,
    pub tolerance: f64,
    pub confidence: f64,
    pub train_needed: Option<u64>,
    pub vc_allowance_at_train_needed: Option<f64>,
}

/// Plans the training size for `family` at `tolerance`.
pub fn plan_train(family: &Family, tolerance: f64, confidence: f64) -> Result<TrainPlan, Error> {
    let delta = check_confidence(confidence)?;
    check_positive("--tolerance", tolerance)?;
    let needed = vc::train_needed(family, tolerance, delta);
    Ok(TrainPlan {
        family: family.key(),
        vc_dim: family.vc_dim(),
        tolerance,
        confidence,
        train_needed: needed,
        vc_allowance_at_train_needed: needed.map(|n| vc::allowance(family, n, delta)),
    })
}

/// The family named by `key` with `params` (flags `--family`, `--dim`, ...).
pub fn family(key: &str, params: &FamilyParams) -> Result<Family, Error> {
    match growth::resolve(key, params) {
        Ok(Some(family)) => Ok(family),
        Ok(None) => Err(Error::Usage(format!(
            "--family {key}: {}",
            crate::suggest::unknown_family_sentence(key)
        ))),
        Err(error) => Err(Error::Usage(format!(
            "--{}: {}",
            error.parameter.replace('_', "-"),
            error.message
        ))),
    }
}

/// A whole number written as a JSON number when it fits in 64 bits, as text otherwise.
#[derive(Clone, Debug, PartialEq)]
pub struct BigCount(pub BigUint);

impl Serialize for BigCount {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        match u64::try_from(&self.0) {
            Ok(small) => serializer.serialize_u64(small),
            Err(_) => serializer.serialize_str(&self.0.to_string()),
        }
    }
}

/// One row of the growth table.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct GrowthRow {
    pub n: u64,
    pub growth: BigCount,
    pub two_to_n: BigCount,
    pub growth_ln: f64,
}

/// `gapcert growth`: m_H(N) against 2^N for N = 1..=upto.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct GrowthTable {
    pub family: &'static str,
    pub vc_dim: Option<u64>,
    pub break_point: Option<u64>,
    pub rows: Vec<GrowthRow>,
}

/// The largest N the growth table accepts (exact big integers of N bits per row).
pub const GROWTH_TABLE_LIMIT: u64 = 100_000;

/// The growth table of `family` up to `upto`.
pub fn growth_table(family: &Family, upto: u64) -> Result<GrowthTable, Error> {
    if upto == 0 || upto > GROWTH_TABLE_LIMIT {
        return Err(Error::Usage(format!(
            "--upto {upto} must be between 1 and {GROWTH_TABLE_LIMIT}"
        )));
    }
    let rows = (1..=upto)
        .map(|n| GrowthRow {
            n,
            growth: BigCount(family.growth_exact(n)),
            two_to_n: BigCount(BigUint::from(1u8) << n),
            growth_ln: family.ln_growth(n),
        })
        .collect();
    Ok(GrowthTable {
        family: family.key(),
        vc_dim: family.vc_dim(),
        break_point: family.break_point(),
        rows,
    })
}

/// One row of `gapcert families`.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct FamilyRow {
    pub key: &'static str,
    pub parameters: &'static [&'static str],
    pub growth: &'static str,
    pub vc_dim: &'static str,
    pub source: &'static str,
}

/// `gapcert families`: every known family.
#[derive(Clone, Debug, PartialEq, Serialize)]
#[serde(transparent)]
pub struct FamilyList {
    pub families: Vec<FamilyRow>,
}

/// The catalogue of families.
pub fn families() -> FamilyList {
    FamilyList {
        families: growth::catalogue()
            .iter()
            .map(|f| FamilyRow {
                key: f.key,
                parameters: f.parameters,
                growth: f.growth_formula,
                vc_dim: f.vc_dim,
                source: f.source,
            })
            .collect(),
    }
}
