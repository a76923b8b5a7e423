//! Orbital stability: chaos indicators, events, analytic criteria, surveys and maps.

pub mod criteria;
pub mod map;
pub mod megno;
pub mod run;
pub mod survey;
