//! Regularized incomplete beta ratio `I_x(a, b)` and its inverse, one algorithm
//! family per file:
//!
//! - `evaluation`: both tails of the ratio, after A. R. DiDonato & A. H. Morris,
//!   "Algorithm 708", ACM TOMS 18(3), 1992, 360–373 (BRATIO, for a, b ≥ 1);
//! - `inversion`: x for a given tail probability, from the starting values of
//!   Cran, Martin & Thomas 1977 ("Algorithm AS 109") or the gamma limit of the
//!   ratio (Temme 1996), then a series-reversion iteration on that evaluation.
//!
//! Each file opens with its sources and the parameter regions of its methods.

mod evaluation;
mod inversion;

pub use evaluation::{incomplete_beta, ln_incomplete_beta, ln_prefactor, LnBetaTails};
pub use inversion::{inverse_incomplete_beta, Tail};
