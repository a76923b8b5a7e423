//! Output layer: pictures (SVG) of fits, periodograms, angles, stability
//! maps and posteriors.
//!
//! Everything here turns plain numbers handed in by the caller into text;
//! nothing computes science and nothing touches the file system (the caller
//! writes the returned text atomically).

pub mod plot;
