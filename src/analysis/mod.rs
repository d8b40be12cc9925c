//! What follows from the solved circuit: cautions now; worst case, rating checks and sizing
//! build on the same solves.

pub mod cautions;
