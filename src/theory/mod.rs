//! Pure statistical-learning mathematics: concentration bounds, binomial tail
//! inversion, growth functions and VC dimension per model family, and the
//! sample-size solvers built on them. No I/O, no printing, no panics on the
//! documented domains; each file names the published source it follows.

pub mod beta;
pub mod binomial;
pub mod comparison;
pub mod growth;
pub mod hoeffding;
pub mod reuse;
pub mod sample_size;
pub mod special;
pub mod vc;
