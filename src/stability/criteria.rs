//! Analytic stability criteria (placeholder while secular builds).
