//! What follows from the solved circuit: the worst case over tolerances, rating checks,
//! capacitor sizing, and safety cautions.

#![deny(clippy::wildcard_enum_match_arm)]
pub mod capacitor_life;
pub mod cautions;
pub mod checks;
pub mod choke;
pub mod sizing;
pub mod valve;
pub mod worst_case;

pub use choke::choke_guess;
