//! Writing results: tables, maps and the human-readable report. Computes no physics.
