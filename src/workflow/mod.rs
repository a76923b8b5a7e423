//! The astronomer's job as library calls: each function here is one step
//! of the pipeline (periodogram → Keplerian fit → dynamical fit → …) on a
//! dataset and a run file, returning a serialisable report. The command
//! line is a thin layer over these.

pub mod assess;
pub mod fitting;
pub mod job;
pub mod pictures;
pub mod posterior;
pub mod search;
pub mod simulate;
