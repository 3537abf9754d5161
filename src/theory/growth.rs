//! Model families, their growth functions m_H(N), VC dimensions and break points.
//!
//! Sources, per family (SPEC §5):
//! - Sauer–Shelah lemma: N. Sauer, "On the density of families of sets",
//!   J. Combinatorial Theory A 13, 1972, 145–147; S. Shelah, Pacific J. Math.
//!   41, 1972: a class of VC dimension d has m_H(N) ≤ Σ_{i=0}^{min(d,N)} C(N, i).
//! - Affine halfspaces in R^d: T. M. Cover, "Geometrical and statistical
//!   properties of systems of linear inequalities with applications in pattern
//!   recognition", IEEE Trans. Electronic Computers EC-14(3), 1965, 326–334
//!   (function counting theorem): N points in general position in R^d admit
//!   `C(N, d + 1) = 2·Σ_{i=0}^{d} C(N − 1, i)` affine dichotomies.
//! - Trees: description-length count of S. Shalev-Shwartz & S. Ben-David,
//!   "Understanding Machine Learning", Cambridge University Press 2014, ch. 18.
//! - Networks: P. L. Bartlett, N. Harvey, C. Liaw & A. Mehrabian,
//!   "Nearly-tight VC-dimension and pseudodimension bounds for piecewise
//!   linear neural networks", JMLR 20(63), 2019, Theorem 7 (see [`net_vc_bound`]).
//!
//! Everything is computed in log space: `ln m_H(N)` is exact to ~1e-13
//! relative for N up to 10¹² and stays finite up to N ≈ 2·10¹⁸, with no loop
//! over N or d (see [`ln_sauer_sum`]).

use num_bigint::BigUint;
use std::f64::consts::LN_2;

use super::beta::ln_incomplete_beta;
use super::special::ln_choose;

/// A model family with its parameters (all ≥ 1; nets have units > 2).
///
/// This file is the one place a family is defined: its key and parameters
/// ([`resolve`], [`FAMILY_PARAMETERS`]), its growth function, VC dimension and break
/// point (the methods below) and its row of `gapcert families` ([`catalogue`]). Log
/// columns, command-line flags and the audit's caches are derived from these.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Family {
    Ray,
    Interval,
    Linear {
        dim: u64,
    },
    Box {
        dim: u64,
    },
    Stump {
        features: u64,
    },
    Finite {
        size: u64,
    },
    Tree {
        leaves: u64,
        features: u64,
    },
    Vc {
        vc_dim: u64,
    },
    ReluNet {
        weights: u64,
        layers: u64,
        units: u64,
    },
    ThresholdNet {
        weights: u64,
        layers: u64,
        units: u64,
    },
}

/// Every parameter a family may take, in the order log columns and command-line
/// flags list them (`--vc-dim` for `vc_dim`). A new family's new parameter is added
/// here and nowhere else.
pub const FAMILY_PARAMETERS: [&str; 8] = [
    "dim", "vc_dim", "size", "weights", "layers", "units", "leaves", "features",
];

/// Raw parameter values as read from a log row or CLI flags (None = absent), in the
/// order of [`FAMILY_PARAMETERS`].
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct FamilyParams {
    values: [Option<i64>; FAMILY_PARAMETERS.len()],
}

impl FamilyParams {
    /// The parameters from values in the order of [`FAMILY_PARAMETERS`].
    /// Domain: any values; checked by [`resolve`].
    pub fn from_values(values: [Option<i64>; FAMILY_PARAMETERS.len()]) -> FamilyParams {
        FamilyParams { values }
    }

    /// The value of parameter `name` (None when absent or not a parameter).
    pub fn get(&self, name: &str) -> Option<i64> {
        let index = FAMILY_PARAMETERS.iter().position(|p| *p == name)?;
        self.values[index]
    }

    /// These parameters with `name` set to `value`; a name that is not in
    /// [`FAMILY_PARAMETERS`] changes nothing.
    pub fn with(mut self, name: &str, value: i64) -> FamilyParams {
        if let Some(index) = FAMILY_PARAMETERS.iter().position(|p| *p == name) {
            self.values[index] = Some(value);
        }
        self
    }
}

/// The position of a parameter in [`FAMILY_PARAMETERS`], found at compile time (a
/// name that is not there does not compile).
macro_rules! parameter {
    ($name:literal) => {
        const { parameter_index($name) }
    };
}

const fn parameter_index(name: &str) -> usize {
    let mut index = 0;
    while index < FAMILY_PARAMETERS.len() {
        let candidate = FAMILY_PARAMETERS[index].as_bytes();
        let wanted = name.as_bytes();
        if candidate.len() == wanted.len() {
            let mut at = 0;
            while at < wanted.len() && candidate[at] == wanted[at] {
                at += 1;
            }
            if at == wanted.len() {
                return index;
            }
        }
        index += 1;
    }
    panic!("not a family parameter")
}

/// A required family parameter that is missing or out of range.
#[derive(Clone, Debug, PartialEq)]
pub struct FamilyError {
    pub parameter: &'static str,
    pub message: String,
}

/// Ok(Some) for a known key (case-insensitive), Ok(None) for an unknown key,
/// Err when a required parameter is missing or not positive (or units ≤ 2
/// for the network families).
///
/// Domain: any key (at most 16 bytes are read as a known key). Exact. Source: the
/// families of SPEC §5 ([`catalogue`]).
pub fn resolve(key: &str, params: &FamilyParams) -> Result<Option<Family>, FamilyError> {
    // Family names are short: lower-case them on the stack (this runs once per run).
    let key = key.trim();
    let mut lower = [0u8; 16];
    if key.len() > lower.len() {
        return Ok(None);
    }
    for (to, from) in lower.iter_mut().zip(key.bytes()) {
        *to = from.to_ascii_lowercase();
    }
    let key = std::str::from_utf8(&lower[..key.len()]).unwrap_or("");
    let family = match key {
        "ray" => Family::Ray,
        "interval" => Family::Interval,
        "linear" => Family::Linear {
            dim: positive("linear", parameter!("dim"), params)?,
        },
        "box" => Family::Box {
            dim: positive("box", parameter!("dim"), params)?,
        },
        "stump" => Family::Stump {
            features: positive("stump", parameter!("features"), params)?,
        },
        "finite" => Family::Finite {
            size: positive("finite", parameter!("size"), params)?,
        },
        "tree" => Family::Tree {
            leaves: positive("tree", parameter!("leaves"), params)?,
            features: positive("tree", parameter!("features"), params)?,
        },
        "vc" => Family::Vc {
            vc_dim: positive("vc", parameter!("vc_dim"), params)?,
        },
        "relu_net" | "threshold_net" => {
            let name = if key == "relu_net" {
                "relu_net"
            } else {
                "threshold_net"
            };
            let weights = positive(name, parameter!("weights"), params)?;
            let layers = positive(name, parameter!("layers"), params)?;
            let units = positive(name, parameter!("units"), params)?;
            if units <= 2 {
                return Err(FamilyError {
                    parameter: "units",
                    message: format!(
                        "family `{name}` needs units > 2 (the bound of Bartlett et al. 2019 \
                         assumes more than two computation units), got {units}"
                    ),
                });
            }
            if name == "relu_net" {
                Family::ReluNet {
                    weights,
                    layers,
                    units,
                }
            } else {
                Family::ThresholdNet {
                    weights,
                    layers,
                    units,
                }
            }
        }
        _ => return Ok(None),
    };
    Ok(Some(family))
}

/// The parameter at `index` of [`FAMILY_PARAMETERS`] as a count ≥ 1.
fn positive(family: &str, index: usize, params: &FamilyParams) -> Result<u64, FamilyError> {
    let parameter = FAMILY_PARAMETERS[index];
    match params.values[index] {
        Some(v) if v >= 1 => Ok(v as u64),
        Some(v) => Err(FamilyError {
            parameter,
            message: format!("family `{family}` needs {parameter} >= 1, got {v}"),
        }),
        None => Err(FamilyError {
            parameter,
            message: format!("family `{family}` needs {parameter} >= 1 (missing)"),
        }),
    }
}

impl Family {
    /// The family key as written in logs and on the command line (exact).
    pub fn key(&self) -> &'static str {
        match self {
            Family::Ray => "ray",
            Family::Interval => "interval",
            Family::Linear { .. } => "linear",
            Family::Box { .. } => "box",
            Family::Stump { .. } => "stump",
            Family::Finite { .. } => "finite",
            Family::Tree { .. } => "tree",
            Family::Vc { .. } => "vc",
            Family::ReluNet { .. } => "relu_net",
            Family::ThresholdNet { .. } => "threshold_net",
        }
    }

    /// VC dimension, or the upper bound d the growth bound uses (finite:
    /// floor(log2 M), nets: the d of SPEC §5); None where SPEC gives none
    /// (stump, tree).
    pub fn vc_dim(&self) -> Option<u64> {
        match *self {
            Family::Ray => Some(1),
            Family::Interval => Some(2),
            Family::Linear { dim } => Some(dim.saturating_add(1)),
            Family::Box { dim } => Some(dim.saturating_mul(2)),
            Family::Stump { .. } | Family::Tree { .. } => None,
            Family::Finite { size } => Some(floor_log2(size)),
            Family::Vc { vc_dim } => Some(vc_dim),
            Family::ReluNet {
                weights,
                layers,
                units,
            } => Some(net_vc_bound(weights, layers, units, NetUnit::Relu)),
            Family::ThresholdNet {
                weights,
                layers,
                units,
            } => Some(net_vc_bound(weights, layers, units, NetUnit::Threshold)),
        }
    }

    /// ln m_H(n) for n ≥ 1 (n = 0 gives 0, since m_H(0) = 1); accurate to
    /// ~1e-13 relative for n ≤ 10¹², finite up to n = u64::MAX; no O(n) or
    /// O(d) loops.
    ///
    /// Domain: any n. Accuracy: worst relative error 3.3e-16 against 70 mpmath values
    /// at 50 digits, N up to 10¹² and d_VC up to 10⁸ (`fixtures/reference/growth_ln.csv`;
    /// the test asks 1e-12). Source: per family, as in the module docs.
    pub fn ln_growth(&self, n: u64) -> f64 {
        if n == 0 {
            return 0.0;
        }
        let nf = n as f64;
        match *self {
            Family::Ray => nf.ln_1p(),
            Family::Interval => ln_interval_growth(n),
            Family::Linear { dim } => LN_2 + ln_sauer_sum(n - 1, dim),
            Family::Box { dim } => ln_sauer_sum(n, dim.saturating_mul(2)),
            Family::Stump { features } => {
                // 2 + d·(2n − 2) ≤ 2 + 2⁶⁴·2⁶⁵: fine in f64.
                let dichotomies = 2.0 + features as f64 * (2.0 * nf - 2.0);
                dichotomies.ln().min(nf * LN_2)
            }
            Family::Finite { size } => (size as f64).ln().min(nf * LN_2),
            Family::Tree { leaves, features } => {
                let log2_size = tree_log2_size(leaves, features);
                (log2_size as f64).min(nf) * LN_2
            }
            Family::Vc { vc_dim } => ln_sauer_sum(n, vc_dim),
            Family::ReluNet { .. } | Family::ThresholdNet { .. } => {
                ln_sauer_sum(n, self.vc_dim().unwrap_or(u64::MAX))
            }
        }
    }

    /// Exact m_H(n), for the growth table. Cost is O(min(d, n)) big-integer
    /// operations on numbers of up to n bits, so keep n to a few thousand.
    ///
    /// Domain: n up to a few thousand (cost). Exact; checked against the known values
    /// of SPEC §5b and against [`Family::ln_growth`] (`tests/it/theory_facts.rs`).
    pub fn growth_exact(&self, n: u64) -> BigUint {
        if n == 0 {
            return BigUint::from(1u8);
        }
        match *self {
            Family::Ray => BigUint::from(n) + 1u8,
            Family::Interval => {
                let n = BigUint::from(n);
                (&n * (&n + 1u8)) / 2u8 + 1u8
            }
            Family::Linear { dim } => sauer_sum_exact(n - 1, dim) * 2u8,
            Family::Box { dim } => sauer_sum_exact(n, dim.saturating_mul(2)),
            Family::Stump { features } => {
                // 2 + d(2n − 2) < 2^130 ≤ 2^n once n ≥ 130: skip building 2^n.
                let dichotomies =
                    BigUint::from(2u8) + BigUint::from(features) * (BigUint::from(n) * 2u8 - 2u8);
                if n >= 130 {
                    dichotomies
                } else {
                    dichotomies.min(pow2(n))
                }
            }
            Family::Finite { size } => {
                if n >= 64 {
                    BigUint::from(size)
                } else {
                    BigUint::from(size).min(pow2(n))
                }
            }
            Family::Tree { leaves, features } => {
                let log2_size = tree_log2_size(leaves, features);
                pow2(log2_size.min(u128::from(n)) as u64)
            }
            Family::Vc { vc_dim } => sauer_sum_exact(n, vc_dim),
            Family::ReluNet { .. } | Family::ThresholdNet { .. } => {
                sauer_sum_exact(n, self.vc_dim().unwrap_or(u64::MAX))
            }
        }
    }

    /// Smallest k with m_H(k) < 2^k, None if none.
    ///
    /// Exact; checked against [`Family::growth_exact`] for every family
    /// (`tests/it/theory_facts.rs`). Source: the definition of a break point.
    pub fn break_point(&self) -> Option<u64> {
        match *self {
            Family::Stump { features } => {
                // 2 + d(2k − 2) < 2^k happens by k = 74 for any d < 2⁶⁴.
                let d = u128::from(features);
                (1u32..127).find_map(|k| {
                    let dichotomies = 2 + d * (2 * u128::from(k) - 2);
                    (dichotomies < (1u128 << k)).then_some(u64::from(k))
                })
            }
            Family::Tree { leaves, features } => {
                let log2_size = tree_log2_size(leaves, features);
                u64::try_from(log2_size).ok().and_then(|l| l.checked_add(1))
            }
            // For every other family m_H(k) = 2^k exactly up to d_VC and
            // m_H(d_VC + 1) < 2^(d_VC + 1) (Sauer sum, Cover count, min(M, 2^k)).
            _ => self.vc_dim().and_then(|d| d.checked_add(1)),
        }
    }
}

/// floor(log2 m) for m ≥ 1 (0 for m = 0).
fn floor_log2(m: u64) -> u64 {
    if m == 0 {
        0
    } else {
        u64::from(63 - m.leading_zeros())
    }
}

/// log2 |H| = 2k·⌈log2(d + 3)⌉ (Shalev-Shwartz & Ben-David 2014, ch. 18).
fn tree_log2_size(leaves: u64, features: u64) -> u128 {
    let m = u128::from(features) + 3;
    let ceil_log2 = u128::from(128 - (m - 1).leading_zeros());
    2 * u128::from(leaves) * ceil_log2
}

fn pow2(n: u64) -> BigUint {
    BigUint::from(1u8) << n
}

fn ln_interval_growth(n: u64) -> f64 {
    if n <= 1 << 26 {
        // n(n+1)/2 + 1 < 2⁵³: exact in f64.
        let v = u128::from(n) * (u128::from(n) + 1) / 2 + 1;
        (v as f64).ln()
    } else {
        let nf = n as f64;
        nf.ln() + nf.ln_1p() - LN_2 + (2.0 / (nf * (nf + 1.0))).ln_1p()
    }
}

/// Which unit the network bound is for.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum NetUnit {
    /// ReLU units: piecewise polynomial with p + 1 = 2 pieces, degree 1.
    Relu,
    /// Sign (threshold) units: piecewise constant, degree 0.
    Threshold,
}

/// The VC-dimension bound d of SPEC §5 for a network with W weights, L layers
/// and U computation units.
///
/// Bartlett, Harvey, Liaw & Mehrabian 2019 (JMLR 20(63)), Theorem 7, bounds
/// the VC dimension of sign(F) for a feed-forward network whose activations
/// are piecewise polynomial with p + 1 pieces of degree at most D, with k_i
/// units in layer i, W parameters and L layers, by
/// `L̄ + L̄·W·log2(4e·p·Σ i·k_i · log2(2e·p·Σ i·k_i))` for D ≥ 1, where L̄ ≤ L
/// is the effective depth, and by `L + W·log2(4e·p·Σ k_i · log2(2e·p·Σ k_i))`
/// for D = 0. As SPEC §5 states its use: p = 1, degree 1 for ReLU, degree 0
/// for sign units, L̄ ≤ L and Σ i·k_i ≤ L·U, which gives
/// - ReLU: `d = ⌊L + L·W·log2(4e·L·U·log2(2e·L·U))⌋`;
/// - threshold: `d = ⌊L + W·log2(4e·U·log2(2e·U))⌋`.
///
/// The constants follow SPEC §5 as stated (the theorem text was not
/// re-derived here). Saturates at u64::MAX.
///
/// Domain: any counts (units > 2 is checked by [`resolve`]). Accuracy: the floor of
/// a double; checked against the formula in mpmath for the cases of
/// `fixtures/reference/growth_ln.csv`.
pub fn net_vc_bound(weights: u64, layers: u64, units: u64, unit: NetUnit) -> u64 {
    let e = std::f64::consts::E;
    let w = weights as f64;
    let l = layers as f64;
    let u = units as f64;
    let d = match unit {
        NetUnit::Relu => {
            let lu = l * u;
            l + l * w * (4.0 * e * lu * (2.0 * e * lu).log2()).log2()
        }
        NetUnit::Threshold => l + w * (4.0 * e * u * (2.0 * e * u).log2()).log2(),
    };
    if d.is_nan() {
        return u64::MAX;
    }
    // `as` saturates: +∞ and values ≥ 2⁶⁴ become u64::MAX.
    d.floor() as u64
}

/// ln Σ_{i=0}^{min(d, n)} C(n, i) (the Sauer–Shelah sum), in O(1) work for
/// any n, d:
///
/// - d ≥ n: the sum is 2ⁿ.
/// - d ≤ 0.49·n: sum from the largest term C(n, d) downwards; consecutive
///   terms shrink by the factor i/(n − i + 1) ≤ 0.961, so at most ~1000 terms
///   are needed before they fall below 1e-17 of the sum (geometric stopping).
///   `ln C(n, d)` comes from [`ln_choose`] (Stirling difference, no ln Γ
///   cancellation).
/// - 0.49·n < d < n (the sum is within a factor ~2 of 2ⁿ and the terms decay
///   too slowly near the centre): the complement form
///   `Σ_{i≤d} C(n,i) = 2ⁿ · P[Bin(n, ½) ≤ d] = 2ⁿ · I_{1/2}(n − d, d + 1)`,
///   with the incomplete beta ratio of DiDonato & Morris 1992 (continued
///   fraction or Temme's expansion, both in log space).
///
/// Domain: any n, d. Accuracy: as [`Family::ln_growth`], which it serves (3.3e-16
/// worst relative against mpmath). Source: Sauer 1972; Shelah 1972.
pub fn ln_sauer_sum(n: u64, d: u64) -> f64 {
    if d >= n {
        return n as f64 * LN_2;
    }
    // 100·d ≤ 49·n, in u128 to avoid overflow.
    if u128::from(d) * 100 <= u128::from(n) * 49 {
        let nf = n as f64;
        let mut term = 1.0;
        let mut sum = 1.0;
        let mut i = d;
        while i >= 1 {
            let i_f = i as f64;
            term *= i_f / (nf - i_f + 1.0);
            sum += term;
            if term <= 1e-17 * sum {
                break;
            }
            i -= 1;
        }
        ln_choose(n, d) + sum.ln()
    } else {
        let a = (n - d) as f64;
        let b = d as f64 + 1.0;
        n as f64 * LN_2 + ln_incomplete_beta(a, b, 0.5, 0.5).ln_lower
    }
}

/// Σ_{i=0}^{min(d, n)} C(n, i) exactly; when 2d ≥ n it is computed as
/// 2ⁿ − Σ_{i<n−d} C(n, i), so the loop has at most n/2 steps.
///
/// Domain: n up to a few thousand (cost). Exact (big integers). Source: Sauer 1972.
pub fn sauer_sum_exact(n: u64, d: u64) -> BigUint {
    if d >= n {
        return pow2(n);
    }
    let partial = |upto: u64| -> BigUint {
        let mut term = BigUint::from(1u8);
        let mut sum = BigUint::from(1u8);
        for i in 0..upto {
            term = term * (n - i) / (i + 1);
            sum += &term;
        }
        sum
    };
    if d.saturating_mul(2) < n {
        partial(d)
    } else {
        pow2(n) - partial(n - d - 1)
    }
}

/// Whether `key` names a family of [`catalogue`] (case-insensitive).
pub fn is_known_key(key: &str) -> bool {
    let key = key.trim();
    CATALOGUE.iter().any(|f| f.key.eq_ignore_ascii_case(key))
}

/// One row of `gapcert families`.
pub struct FamilyInfo {
    pub key: &'static str,
    pub parameters: &'static [&'static str],
    pub growth_formula: &'static str,
    pub vc_dim: &'static str,
    pub source: &'static str,
}

static CATALOGUE: [FamilyInfo; 10] = [
    FamilyInfo {
        key: "ray",
        parameters: &[],
        growth_formula: "N + 1",
        vc_dim: "1",
        source: "positive rays on the line; common textbook result",
    },
    FamilyInfo {
        key: "interval",
        parameters: &[],
        growth_formula: "N(N+1)/2 + 1",
        vc_dim: "2",
        source: "positive intervals on the line; common textbook result",
    },
    FamilyInfo {
        key: "linear",
        parameters: &["dim"],
        growth_formula: "2 * sum_{i=0}^{d} C(N-1, i)",
        vc_dim: "d + 1",
        source: "Cover 1965, IEEE Trans. Electronic Computers EC-14(3) (function counting \
                 theorem): affine halfspaces in R^d, points in general position",
    },
    FamilyInfo {
        key: "box",
        parameters: &["dim"],
        growth_formula: "sum_{i=0}^{min(2d,N)} C(N, i) (Sauer bound with d_VC = 2d)",
        vc_dim: "2d",
        source: "axis-aligned boxes in R^d; Sauer 1972 / Shelah 1972 bound",
    },
    FamilyInfo {
        key: "stump",
        parameters: &["features"],
        growth_formula: "min(2^N, 2 + d(2N - 2))",
        vc_dim: "not given (bound used directly)",
        source: "one-feature threshold with either sign; counting of thresholds per feature",
    },
    FamilyInfo {
        key: "finite",
        parameters: &["size"],
        growth_formula: "min(M, 2^N)",
        vc_dim: "<= floor(log2 M)",
        source: "union bound over a finite class",
    },
    FamilyInfo {
        key: "tree",
        parameters: &["leaves", "features"],
        growth_formula: "min(2^N, |H|), log2|H| = 2k * ceil(log2(d + 3))",
        vc_dim: "not given (description-length bound used directly)",
        source: "description-length count of trees with k leaves over d binary features \
                 (Shalev-Shwartz & Ben-David 2014, Understanding Machine Learning, ch. 18)",
    },
    FamilyInfo {
        key: "vc",
        parameters: &["vc_dim"],
        growth_formula: "sum_{i=0}^{min(d,N)} C(N, i)",
        vc_dim: "d",
        source: "Sauer-Shelah lemma (Sauer 1972, J. Combin. Theory A 13; Shelah 1972)",
    },
    FamilyInfo {
        key: "relu_net",
        parameters: &["weights", "layers", "units"],
        growth_formula: "Sauer bound with d = floor(L + L*W*log2(4e*L*U*log2(2e*L*U)))",
        vc_dim: "<= d",
        source: "Bartlett, Harvey, Liaw & Mehrabian 2019, JMLR 20(63), Theorem 7 with p = 1 \
                 (ReLU: two pieces) and degree 1, using effective depth <= L and \
                 sum_i i*k_i <= L*U; constant as stated in SPEC section 5",
    },
    FamilyInfo {
        key: "threshold_net",
        parameters: &["weights", "layers", "units"],
        growth_formula: "Sauer bound with d = floor(L + W*log2(4e*U*log2(2e*U)))",
        vc_dim: "<= d",
        source: "Bartlett, Harvey, Liaw & Mehrabian 2019, JMLR 20(63), Theorem 7 with \
                 degree 0 (sign units), p = 1; constant as stated in SPEC section 5",
    },
];

/// One entry per family, for `gapcert families`.
/// Exact text; a test checks that its keys are exactly those [`resolve`] knows and
/// that its parameters are those [`FAMILY_PARAMETERS`] lists.
pub fn catalogue() -> &'static [FamilyInfo] {
    &CATALOGUE
}
