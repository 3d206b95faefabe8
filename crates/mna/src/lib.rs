//! rolloff-mna: modified nodal analysis of an elaborated circuit.
//!
//! Will own stamping a `Circuit` into a `System` (G and C kept apart), the AC solve at
//! any frequency, the DC bias solve and the diagnosis of singular systems. It does not
//! parse text and computes no response metrics.
