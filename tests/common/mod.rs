//! Helpers shared by several test files.
pub mod field;
