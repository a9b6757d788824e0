//! Material functions: open-circuit potentials, the Arrhenius factor and physical constants.

pub mod arrhenius;
pub mod constants;
pub mod fast_exp;
pub mod ocp;
pub mod units;

pub use arrhenius::arrhenius_factor;
pub use ocp::{BuiltinOcp, OpenCircuit};
