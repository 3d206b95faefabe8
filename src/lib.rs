//! rolloff: small-signal AC analysis of filter and coupling networks.
//!
//! This facade re-exports the workspace's library crates so an embedding program
//! needs one dependency. It owns no logic of its own.

pub use rolloff_mna as mna;
pub use rolloff_netlist as netlist;
pub use rolloff_report as report;
pub use rolloff_tolerance as tolerance;
