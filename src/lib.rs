//! railcheck's core: what a transformer-rectifier-capacitor DC supply should read, worked out
//! by solving the real circuit. No I/O and no terminal here; the command line and the screens
//! are thin shells around these functions.

pub mod calibration;
pub mod circuit;
pub mod cli;
pub mod clock;
pub mod diagnose;
pub mod escape;
pub mod supply;
pub mod tui;
pub mod units;
pub mod visit;

pub use circuit::{Conditions, Figures, HandEstimate, Operating, solve, solve_nominal};
pub use supply::{Supply, SupplyError, Topology};
pub mod analysis;
pub mod library;
pub mod record;
pub mod report;
