//! Reports: the terminal table, JSON, the SPICE netlist. Each returns a string; the binary writes it.
pub mod json;
pub mod spice;
pub mod table;
