//! Orbital stability: chaos indicators, events, analytic criteria, surveys and maps.

pub mod criteria;
pub mod megno;
