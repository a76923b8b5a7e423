//! Stability maps: a stability indicator on a grid of two orbital elements
//! of a solution (e.g. the outer planet's period and eccentricity), every
//! cell a [`super::run::run_stability`] run, computed in parallel with
//! rayon and written as CSV.
//!
//! Each cell replaces the two chosen osculating Jacobi elements of the base
//! solution (all else held: masses, other elements, reference epoch) and
//! runs the system. The indicator ([`Indicator`]) is read from the run:
//! survival time in orbits of the outermost planet, largest eccentricity,
//! largest semi-major-axis drift, or MEGNO ⟨Y⟩ (Cincotta & Simó 2000, A&AS
//! 147, 205; computed by [`crate::stability::megno::megno_run`] over the
//! cell's run length with the run's step, see [`RunSettings::megno`]).
//! Grid values are evenly spaced, both ends included (one value: the lower
//! end). Cells are independent and results are collected in grid order, so
//! the map is the same whatever the thread count.
//!
//! # Disrupted cells
//!
//! A cell whose run is stopped by an event before its full length (close
//! encounter, collision with the star, ejection, numerical failure after an
//! encounter) keeps the event as its verdict (`close-encounter`,
//! `star-collision`, `ejection`, `integration-failure`;
//! [`MapCell::disrupted`]). MEGNO is not computed for such a run, so with
//! [`Indicator::Megno`] its value is empty (`None`, an empty CSV field)
//! and only the verdict tells what happened; the picture
//! ([`crate::workflow::pictures::map_picture`]) draws it at the chaotic end
//! of the scale *and* marks it with a dot, so it is never mistaken for a
//! measured ⟨Y⟩. A surviving cell whose MEGNO integration fails
//! numerically has the verdict `megno-failure`, no value and the reason in
//! [`MapCell::error`]. An impossible system is `invalid`.

use std::fmt::Write as _;

use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use super::run::{RunSettings, StabilityError, StabilityReport, run_stability};
use crate::nbody::System;
use crate::nbody::system::{JacobiPlanet, OrbitSize};
use crate::units::jupiter_to_sun;

/// An osculating Jacobi element that a map axis varies.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum Element {
    /// Period in days.
    Period,
    /// Semi-major axis in au.
    SemiMajorAxis,
    /// Eccentricity.
    Eccentricity,
    /// Mass in Jupiter masses.
    MassJupiter,
    /// Inclination in degrees.
    InclinationDeg,
    /// ω⋆ in degrees.
    OmegaStarDeg,
}

/// Every element, in the order of [`Element::name`]'s list.
const ELEMENTS: [Element; 6] = [
    Element::Period,
    Element::SemiMajorAxis,
    Element::Eccentricity,
    Element::MassJupiter,
    Element::InclinationDeg,
    Element::OmegaStarDeg,
];

impl Element {
    /// Name used on the command line and in CSV headers.
    pub fn name(self) -> &'static str {
        match self {
            Element::Period => "period",
            Element::SemiMajorAxis => "semi_major_axis",
            Element::Eccentricity => "eccentricity",
            Element::MassJupiter => "mass_jupiter",
            Element::InclinationDeg => "inclination",
            Element::OmegaStarDeg => "omega_star",
        }
    }

    /// The element of [`Element::name`].
    pub fn from_name(s: &str) -> Option<Self> {
        ELEMENTS.into_iter().find(|e| e.name() == s)
    }

    /// Name, symbol and unit for an axis label of planet `planet`
    /// (0-based), e.g. "period P_2 [d]", "eccentricity e_2 [1]" (planets
    /// numbered from 1, innermost first; osculating Jacobi elements at the
    /// reference epoch).
    pub fn axis_label(self, planet: usize) -> String {
        let k = planet + 1;
        match self {
            Element::Period => format!("period P_{k} [d]"),
            Element::SemiMajorAxis => format!("semi-major axis a_{k} [au]"),
            Element::Eccentricity => format!("eccentricity e_{k} [1]"),
            Element::MassJupiter => format!("mass m_{k} [M_Jup]"),
            Element::InclinationDeg => format!("inclination i_{k} [deg]"),
            Element::OmegaStarDeg => format!("star's periastron argument ω⋆_{k} [deg]"),
        }
    }

    fn set(self, p: &mut JacobiPlanet, v: f64) {
        match self {
            Element::Period => p.size = OrbitSize::Period(v),
            Element::SemiMajorAxis => p.size = OrbitSize::SemiMajorAxis(v),
            Element::Eccentricity => p.e = v,
            Element::MassJupiter => p.mass = jupiter_to_sun(v),
            Element::InclinationDeg => p.inc = v.to_radians(),
            Element::OmegaStarDeg => p.omega_star = v.to_radians(),
        }
    }
}

/// One axis of a map.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Axis {
    /// Planet, 0-based from the innermost.
    pub planet: usize,
    /// Which element.
    pub element: Element,
    /// First value.
    pub min: f64,
    /// Last value.
    pub max: f64,
    /// Number of values (≥ 1).
    pub n: usize,
}

impl Axis {
    /// The i-th grid value.
    pub fn value(&self, i: usize) -> f64 {
        if self.n <= 1 {
            self.min
        } else {
            self.min + (self.max - self.min) * i as f64 / (self.n - 1) as f64
        }
    }
}

/// The indicator a map shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum Indicator {
    /// Survival time in orbits of the outermost planet (the run length when
    /// stable).
    SurvivalOrbits,
    /// Largest eccentricity of any planet over the run.
    MaxEccentricity,
    /// Largest |Δa|/a of any planet over the run.
    AxisDrift,
    /// MEGNO ⟨Y⟩ at the end of the run (Cincotta & Simó 2000): → 2 for
    /// quasi-periodic orbits, growing for chaotic ones; empty for a
    /// disrupted run (module docs). Choosing it turns
    /// [`RunSettings::megno`] on.
    Megno,
}

impl Indicator {
    /// Every indicator, in the order of the command line's help.
    pub const ALL: [Indicator; 4] = [
        Indicator::SurvivalOrbits,
        Indicator::MaxEccentricity,
        Indicator::AxisDrift,
        Indicator::Megno,
    ];

    /// Value of the indicator for a run: survival in outer orbits, the
    /// largest eccentricity or |Δa|/a of any planet, or ⟨Y⟩. MEGNO is
    /// `None` when it was not computed (not asked for, or the run was
    /// disrupted); the others always have a value.
    pub fn value(self, r: &StabilityReport) -> Option<f64> {
        let max = |v: &[f64]| v.iter().copied().fold(0.0, f64::max);
        match self {
            Indicator::SurvivalOrbits => Some(r.survival_orbits),
            Indicator::MaxEccentricity => Some(max(&r.max_eccentricity)),
            Indicator::AxisDrift => Some(max(&r.max_axis_drift)),
            Indicator::Megno => r.megno.filter(|y| y.is_finite()),
        }
    }

    /// Name used on the command line and as the CSV column: `survival`,
    /// `max-e`, `drift`, `megno`.
    pub fn name(self) -> &'static str {
        match self {
            Indicator::SurvivalOrbits => "survival",
            Indicator::MaxEccentricity => "max-e",
            Indicator::AxisDrift => "drift",
            Indicator::Megno => "megno",
        }
    }

    /// Label with unit for pictures: "survival [outer orbits]", "largest
    /// e [1]", "largest |Δa|/a [1]", "⟨Y⟩ (MEGNO)" (dimensionless).
    pub fn label(self) -> &'static str {
        match self {
            Indicator::SurvivalOrbits => "survival [outer orbits]",
            Indicator::MaxEccentricity => "largest e [1]",
            Indicator::AxisDrift => "largest |Δa|/a [1]",
            Indicator::Megno => "⟨Y⟩ (MEGNO)",
        }
    }

    /// The indicator of [`Indicator::name`].
    pub fn from_name(s: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|i| i.name() == s)
    }
}

/// A solution to map about.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BaseSolution {
    /// Stellar mass in M☉.
    pub star_mass: f64,
    /// Stellar radius in au.
    pub star_radius: f64,
    /// Planets (osculating Jacobi elements at `t_ref`), innermost first.
    pub planets: Vec<JacobiPlanet>,
    /// Reference epoch in days.
    pub t_ref: f64,
}

/// Settings of a map.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct MapSettings {
    /// Horizontal axis.
    pub x: Axis,
    /// Vertical axis.
    pub y: Axis,
    /// Indicator shown.
    pub indicator: Indicator,
    /// Run of each cell.
    pub run: RunSettings,
}

/// One cell of a map.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MapCell {
    /// Column index.
    pub ix: usize,
    /// Row index.
    pub iy: usize,
    /// x value.
    pub x: f64,
    /// y value.
    pub y: f64,
    /// Indicator value (`None` when the cell's system is impossible, and
    /// for MEGNO when the run was disrupted or its MEGNO failed).
    pub value: Option<f64>,
    /// Verdict label ([`crate::stability::run::Verdict::label`]), or
    /// [`INVALID`] for an impossible system, or [`MEGNO_FAILURE`].
    pub verdict: String,
    /// Survival in orbits of the outermost planet.
    pub survival_orbits: Option<f64>,
    /// MEGNO ⟨Y⟩ when it was computed ([`RunSettings::megno`] on and the
    /// run not disrupted).
    pub megno: Option<f64>,
    /// Why the cell could not be run (or its MEGNO not computed).
    pub error: Option<String>,
}

/// Verdict of a surviving cell whose MEGNO integration failed.
pub const MEGNO_FAILURE: &str = "megno-failure";
/// Verdict of a cell whose system is impossible.
pub const INVALID: &str = "invalid";

impl MapCell {
    /// True when the cell's run was stopped by an event before its full
    /// length (its verdict is the event's label; module docs).
    pub fn disrupted(&self) -> bool {
        !matches!(self.verdict.as_str(), "stable" | INVALID | MEGNO_FAILURE)
    }
}

/// A whole map, cells in row-major order (y outer, x inner).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct StabilityMap {
    /// Settings it was made with.
    pub settings: MapSettings,
    /// The cells.
    pub cells: Vec<MapCell>,
}

/// Compute a map about `base` (module docs). `progress` is called from
/// worker threads with the number of cells done.
///
/// A cell whose system is impossible (e ≥ 1, periods out of order, …) is
/// marked `invalid` with its reason; a cell whose run needs more than
/// [`RunSettings::max_steps`] steps fails the whole map.
///
/// # Errors
/// Bad axes (planet index, n = 0, non-finite ends), bad run settings, or a
/// run refused for its length.
pub fn stability_map(
    base: &BaseSolution,
    settings: &MapSettings,
    progress: &(dyn Fn(usize) + Sync),
) -> Result<StabilityMap, StabilityError> {
    for a in [&settings.x, &settings.y] {
        if a.planet >= base.planets.len() || a.n == 0 || !a.min.is_finite() || !a.max.is_finite() {
            return Err(StabilityError::BadSettings(format!(
                "map axis {a:?}: planet must exist, n ≥ 1, ends finite"
            )));
        }
    }
    let mut settings = *settings;
    if settings.indicator == Indicator::Megno {
        settings.run.megno = true;
    }
    let settings = &settings;
    let (nx, ny) = (settings.x.n, settings.y.n);
    let done = std::sync::atomic::AtomicUsize::new(0);
    let cells: Vec<Result<MapCell, StabilityError>> = (0..nx * ny)
        .into_par_iter()
        .map(|c| {
            let (ix, iy) = (c % nx, c / nx);
            let (x, y) = (settings.x.value(ix), settings.y.value(iy));
            let mut planets = base.planets.clone();
            settings.x.element.set(&mut planets[settings.x.planet], x);
            settings.y.element.set(&mut planets[settings.y.planet], y);
            let empty = |verdict: &str, why: String| MapCell {
                ix,
                iy,
                x,
                y,
                value: None,
                verdict: verdict.into(),
                survival_orbits: None,
                megno: None,
                error: Some(why),
            };
            let cell = match System::from_jacobi_elements(
                base.star_mass,
                base.star_radius,
                &planets,
                base.t_ref,
            ) {
                Err(e) => empty(INVALID, e.to_string()),
                Ok(sys) => match run_stability(&sys, &settings.run) {
                    Ok(r) => MapCell {
                        ix,
                        iy,
                        x,
                        y,
                        value: settings.indicator.value(&r),
                        verdict: r.verdict.label().into(),
                        survival_orbits: Some(r.survival_orbits),
                        megno: r.megno.filter(|y| y.is_finite()),
                        error: None,
                    },
                    Err(StabilityError::BadSystem(s)) => empty(INVALID, s),
                    Err(StabilityError::Megno(s)) => empty(MEGNO_FAILURE, s),
                    Err(e) => return Err(e),
                },
            };
            progress(done.fetch_add(1, std::sync::atomic::Ordering::SeqCst) + 1);
            Ok(cell)
        })
        .collect();
    Ok(StabilityMap {
        settings: *settings,
        cells: cells.into_iter().collect::<Result<_, _>>()?,
    })
}

/// The map as CSV: `ix,iy,<x name>,<y name>,<indicator>,verdict,
/// survival_orbits` with names like `p1.period` (planet numbered from 1,
/// innermost first), and a last column `megno` (⟨Y⟩) whenever MEGNO was
/// computed with another indicator (with [`Indicator::Megno`] the
/// indicator column is `megno` itself). Empty fields where there is no
/// value: invalid cells, and ⟨Y⟩ of disrupted cells, whose verdict column
/// names the event (module docs).
pub fn map_csv(map: &StabilityMap) -> String {
    let s = &map.settings;
    let extra = s.run.megno && s.indicator != Indicator::Megno;
    let mut out = format!(
        "ix,iy,p{}.{},p{}.{},{},verdict,survival_orbits{}\n",
        s.x.planet + 1,
        s.x.element.name(),
        s.y.planet + 1,
        s.y.element.name(),
        s.indicator.name(),
        if extra { ",megno" } else { "" }
    );
    let f = |v: Option<f64>| v.map_or(String::new(), |x| format!("{x:?}"));
    for c in &map.cells {
        let _ = write!(
            out,
            "{},{},{:?},{:?},{},{},{}",
            c.ix,
            c.iy,
            c.x,
            c.y,
            f(c.value),
            c.verdict,
            f(c.survival_orbits)
        );
        if extra {
            let _ = write!(out, ",{}", f(c.megno));
        }
        out.push('\n');
    }
    out
}
