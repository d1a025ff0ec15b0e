//! Reports: the terminal table, JSON. Each returns a string; the binary writes it.
pub mod json;
pub mod table;
