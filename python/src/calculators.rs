//! The calculators (SPEC §12): the library's `gapcert::calculators` and
//! `gapcert::theory::binomial`, with its checks and wording.

use pyo3::prelude::*;
use pyo3::types::{PyDict, PyTuple};

use gapcert::calculators;
use gapcert::theory::binomial;
use gapcert::theory::growth::{FamilyParams, FAMILY_PARAMETERS};
use gapcert::Error;

use crate::errors::IntoPy;

/// `bound(which, errors, n, confidence, candidates, alpha)`: the one-sided
/// Clopper–Pearson bound ("upper" or "lower") on the error rate for `errors` of `n`,
/// at level α = (1 − confidence) / candidates, or at `alpha` when given (then
/// `confidence` and `candidates` are not used).
pub fn bound(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let (which, errors, n, confidence, candidates, alpha): (
        String,
        u64,
        u64,
        f64,
        u64,
        Option<f64>,
    ) = args.extract()?;
    let value = bound_value(&which, errors, n, confidence, candidates, alpha).py_err(py)?;
    Ok(value.into_pyobject(py)?.into_any().unbind())
}

fn bound_value(
    which: &str,
    errors: u64,
    n: u64,
    confidence: f64,
    candidates: u64,
    alpha: Option<f64>,
) -> Result<f64, Error> {
    if n == 0 {
        return Err(Error::Usage("n must be at least 1".into()));
    }
    if errors > n {
        return Err(Error::Usage(format!(
            "errors = {errors} is more than n = {n}"
        )));
    }
    let alpha = match alpha {
        Some(alpha) => {
            if !(alpha > 0.0 && alpha < 1.0) {
                return Err(Error::Usage(format!(
                    "alpha = {alpha} must be strictly between 0 and 1"
                )));
            }
            alpha
        }
        None => {
            if candidates == 0 {
                return Err(Error::Usage("--candidates must be at least 1".into()));
            }
            gapcert::options::check_confidence(confidence)? / candidates as f64
        }
    };
    Ok(match which {
        "upper" => binomial::upper_bound(errors, n, alpha),
        _ => binomial::lower_bound(errors, n, alpha),
    })
}

/// `plan_holdout(error_rate, claim_accuracy, candidates, confidence)`: held-out
/// examples needed by the exact binomial bound and by Hoeffding's (None where no
/// size certifies the claim).
pub fn plan_holdout(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let (error_rate, claim_accuracy, candidates, confidence): (f64, f64, u64, f64) =
        args.extract()?;
    let plan =
        calculators::plan_holdout(error_rate, claim_accuracy, candidates, confidence).py_err(py)?;
    Ok(
        (plan.holdout_needed_binomial, plan.holdout_needed_hoeffding)
            .into_pyobject(py)?
            .into_any()
            .unbind(),
    )
}

/// `plan_reuse(holdout_n, error_rate, claim_accuracy, confidence)`: the largest K
/// that still certifies the claim (exact binomial, Hoeffding), and the errors k
/// assumed (⌈E·N⌉).
pub fn plan_reuse(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let (holdout_n, error_rate, claim_accuracy, confidence): (u64, f64, f64, f64) =
        args.extract()?;
    let plan =
        calculators::plan_reuse(holdout_n, error_rate, claim_accuracy, confidence).py_err(py)?;
    Ok((
        plan.max_candidates,
        plan.hoeffding_max_candidates,
        plan.holdout_misclassified,
    )
        .into_pyobject(py)?
        .into_any()
        .unbind())
}

/// The family `key` with the parameters of the dict `params` (names of
/// [`FAMILY_PARAMETERS`]).
fn family(key: &str, params: &Bound<'_, PyDict>) -> PyResult<gapcert::theory::growth::Family> {
    let py = params.py();
    let mut values = FamilyParams::default();
    for (name, value) in params.iter() {
        let name: String = name.extract()?;
        if !FAMILY_PARAMETERS.contains(&name.as_str()) {
            return Err(Error::Usage(format!(
                "{name} is not a family parameter; the parameters are {}",
                FAMILY_PARAMETERS.join(", ")
            )))
            .py_err(py);
        }
        let value: i64 = value.extract().map_err(|_| {
            pyo3::exceptions::PyTypeError::new_err(format!("{name} must be an integer"))
        })?;
        values = values.with(&name, value);
    }
    calculators::family(key, &values).py_err(py)
}

/// `plan_train(family, params, tolerance, confidence)`: training examples for the VC
/// allowance to reach `tolerance` (None for a family without a finite growth bound),
/// the VC dimension, and the allowance at that size.
pub fn plan_train(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let (key, params, tolerance, confidence): (String, Bound<'_, PyDict>, f64, f64) =
        args.extract()?;
    let family = family(&key, &params)?;
    let plan = calculators::plan_train(&family, tolerance, confidence).py_err(py)?;
    Ok((
        plan.train_needed,
        plan.vc_dim,
        plan.vc_allowance_at_train_needed,
    )
        .into_pyobject(py)?
        .into_any()
        .unbind())
}

/// `growth(family, params, upto)`: rows (n, m_H(n) as decimal text, ln m_H(n)) for
/// n = 1..=upto (exact integers: Python's int takes the text), plus the VC dimension
/// and the break point.
pub fn growth(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let (key, params, upto): (String, Bound<'_, PyDict>, u64) = args.extract()?;
    let family = family(&key, &params)?;
    let table = py
        .detach(|| calculators::growth_table(&family, upto))
        .py_err(py)?;
    let rows: Vec<(u64, String, f64)> = table
        .rows
        .iter()
        .map(|row| (row.n, row.growth.0.to_string(), row.growth_ln))
        .collect();
    Ok((rows, table.vc_dim, table.break_point)
        .into_pyobject(py)?
        .into_any()
        .unbind())
}

/// `families()`: the catalogue (`gapcert families --format json`) as JSON text.
pub fn families(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let text = serde_json::to_string(&calculators::families())
        .map_err(|error| crate::errors::internal(error.to_string()))?;
    Ok(text.into_pyobject(py)?.into_any().unbind())
}
