//! The ring discretisation of the tube wall ([`grid`]) and the stack's flux derivative
//! tabulated on it ([`fluxtable`]), shared by the drag profile, the spectral solver's
//! finite-tube checks and the stroke simulation (moved out of `transient` so that
//! `dragprofile` and `transient` no longer import each other).

pub mod fluxtable;
pub mod grid;
