//! Jobs: many solver runs for one question, built on everything below.
//!
//! Named scalar metrics of a design ([`metrics`]), sweeps over design fields ([`sweep`]),
//! worst-case tolerance bands ([`tolerance`]), inverse sizing ([`sizing`]), targets on what
//! the customer feels ([`targets`]), and choosing from stocked parts ([`selection`]).

pub mod metrics;
pub mod selection;
pub mod sizing;
pub mod sweep;
pub mod targets;
pub mod tolerance;
