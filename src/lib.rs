//! fadecast: physics-based forecasts of lithium-ion capacity fade and resistance growth.
//!
//! Data flows one way: input files → validated structs ([`input`]) → cycle model ([`cycle`])
//! → reports ([`report`]). Physics modules never read files or print; the command layer
//! ([`cli`]) never does physics.

pub mod aging;
pub mod calibrate;
pub mod cli;
pub mod compare;
pub mod cycle;
pub mod ensemble;
pub mod forecast;
pub mod input;
pub mod material;
pub mod report;

/// The caution every output carries: forecasts are engineering estimates.
pub const CAUTION: &str = "fadecast gives engineering estimates from a reduced physical model. \
They do not replace qualification and abuse testing under the applicable standards \
(for example IEC 62660-1/-2, IEC 62619, UL 1973), local codes and licensed practice.";
