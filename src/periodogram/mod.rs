//! Periodograms: generalised Lomb–Scargle, false-alarm probability, window, peeling.
