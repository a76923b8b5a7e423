//! Physical and logical range checks of a parsed run file.

use super::error::{FieldPath, ValidationIssue};
use super::sections::{FitSection, IntegratorChoice};
use super::types::{InstrumentChoice, RunFile, Signal};

/// Whether a label is usable as an instrument name in tables: non-empty,
/// no surrounding spaces, no `#` (comment) or `,` (separator).
fn usable_label(name: &str) -> bool {
    !name.is_empty()
        && name.trim() == name
        && !name.contains(['#', ','])
        && !name.chars().any(char::is_control)
}

struct Checker {
    issues: Vec<ValidationIssue>,
}

impl Checker {
    fn push(&mut self, field: FieldPath, planet: Option<&str>, problem: String) {
        self.issues.push(ValidationIssue {
            field,
            planet: planet.map(str::to_string),
            problem,
        });
    }

    /// A finite number satisfying `ok`, else an issue saying `range`.
    fn number(
        &mut self,
        field: FieldPath,
        planet: Option<&str>,
        x: f64,
        ok: impl Fn(f64) -> bool,
        range: &str,
    ) {
        if !x.is_finite() {
            self.push(field, planet, format!("must be a finite number, found {x}"));
        } else if !ok(x) {
            self.push(field, planet, format!("must be {range}, found {x}"));
        }
    }
}

/// Check every value of a run file against its physical or logical range.
///
/// Rules: at least one data file; instrument names usable as table labels,
/// unique, and (if `instruments` is given) declared there; star mass > 0,
/// mass uncertainty > 0, radius > 0; planet names non-empty and unique;
/// period > 0 d; semi-amplitude or mass > 0; eccentricity in [0, 1);
/// inclination in [0°, 180°]; the innermost planet's node difference 0
/// (ΔΩ is measured from its node, DESIGN §3); every number finite. Angles
/// other than the inclination may take any finite value (they are reduced
/// modulo 360° by the models).
///
/// Returns every issue found, in file order of the sections; empty if the
/// run file is acceptable.
///
/// ```
/// use apsidal::config::{parse_run_str, validate};
/// let text = r#"(
///     data: [(path: "veska.txt", instrument: Named("VESKA"))],
///     star: (mass: 0.74),
///     planets: [(name: "b", period: 12.5, signal: SemiAmplitude(8.0),
///                eccentricity: 0.1, omega_star: 40.0, phase: MeanAnomaly(10.0))],
/// )"#;
/// let mut run = parse_run_str(text, "mem.ron", None).unwrap();
/// assert!(validate(&run).is_empty());
/// run.planets[0].eccentricity = 1.0;
/// let issues = validate(&run);
/// assert_eq!(issues[0].to_string(),
///     "planets[0].eccentricity (planet 'b'): must be in [0, 1), found 1");
/// ```
pub fn validate(run: &RunFile) -> Vec<ValidationIssue> {
    let mut c = Checker { issues: Vec::new() };
    let root = FieldPath::default();

    if run.data.is_empty() {
        c.push(
            root.field("data"),
            None,
            "must name at least one RV table".into(),
        );
    }
    if let Some(names) = &run.instruments {
        let f = root.field("instruments");
        if names.is_empty() {
            c.push(
                f.clone(),
                None,
                "must not be empty (omit it to accept any instrument)".into(),
            );
        }
        for (i, n) in names.iter().enumerate() {
            if !usable_label(n) {
                c.push(f.index(i), None, format!("'{n}' is not a usable instrument label (non-empty, no surrounding spaces, no '#' or ',')"));
            } else if names[..i].contains(n) {
                c.push(
                    f.index(i),
                    None,
                    format!("instrument '{n}' is listed twice"),
                );
            }
        }
    }
    for (i, d) in run.data.iter().enumerate() {
        let f = root.field("data").index(i);
        if d.path.as_os_str().is_empty() {
            c.push(f.field("path"), None, "must not be empty".into());
        }
        if let InstrumentChoice::Named(n) = &d.instrument {
            if !usable_label(n) {
                c.push(f.field("instrument"), None, format!("'{n}' is not a usable instrument label (non-empty, no surrounding spaces, no '#' or ',')"));
            } else if let Some(names) = &run.instruments {
                if !names.contains(n) {
                    c.push(
                        f.field("instrument"),
                        None,
                        format!(
                            "instrument '{n}' is not among the declared instruments ({})",
                            names.join(", ")
                        ),
                    );
                }
            }
        }
    }

    let star = root.field("star");
    c.number(
        star.field("mass"),
        None,
        run.star.mass,
        |x| x > 0.0,
        "> 0 (solar masses)",
    );
    if let Some(s) = run.star.mass_uncertainty {
        c.number(
            star.field("mass_uncertainty"),
            None,
            s,
            |x| x > 0.0,
            "> 0 (solar masses)",
        );
    }
    if let Some(r) = run.star.radius {
        c.number(
            star.field("radius"),
            None,
            r,
            |x| x > 0.0,
            "> 0 (solar radii)",
        );
    }

    let innermost = run
        .planets
        .iter()
        .enumerate()
        .filter(|(_, p)| p.period.is_finite() && p.period > 0.0)
        .min_by(|a, b| a.1.period.total_cmp(&b.1.period))
        .map(|(k, _)| k);
    for (k, p) in run.planets.iter().enumerate() {
        let f = root.field("planets").index(k);
        let name = Some(p.name.as_str());
        if p.name.trim().is_empty() {
            c.push(f.field("name"), None, "must not be empty".into());
        } else if run.planets[..k].iter().any(|q| q.name == p.name) {
            c.push(
                f.field("name"),
                name,
                format!("planet name '{}' is used twice", p.name),
            );
        }
        c.number(f.field("period"), name, p.period, |x| x > 0.0, "> 0 (days)");
        let unit = match p.signal {
            Signal::SemiAmplitude(_) => "> 0 (m/s)",
            Signal::MassJupiter(_) => "> 0 (Jupiter masses)",
            Signal::MassEarth(_) => "> 0 (Earth masses)",
        };
        c.number(f.field("signal"), name, p.signal.value(), |x| x > 0.0, unit);
        c.number(
            f.field("eccentricity"),
            name,
            p.eccentricity,
            |e| (0.0..1.0).contains(&e),
            "in [0, 1)",
        );
        c.number(f.field("omega_star"), name, p.omega_star, |_| true, "");
        c.number(f.field("phase"), name, p.phase.value(), |_| true, "");
        if let Some(i) = p.inclination {
            c.number(
                f.field("inclination"),
                name,
                i,
                |x| (0.0..=180.0).contains(&x),
                "in [0, 180] (degrees)",
            );
        }
        if let Some(dn) = p.node_difference {
            c.number(f.field("node_difference"), name, dn, |_| true, "");
            if Some(k) == innermost && dn.is_finite() && dn != 0.0 {
                c.push(f.field("node_difference"), name, format!("must be 0 for the innermost planet (node differences are measured from its node), found {dn}"));
            }
        }
    }

    if let Some(t) = run.reference_epoch {
        c.number(root.field("reference_epoch"), None, t, |_| true, "");
    }
    if let Some(o) = &run.output {
        if o.as_os_str().is_empty() {
            c.push(root.field("output"), None, "must not be empty".into());
        }
    }
    if let Some(fit) = &run.fit {
        check_fit(&mut c, run, fit, &root.field("fit"));
    }
    if let Some(s) = &run.sampler {
        let f = root.field("sampler");
        if s.steps == 0 {
            c.push(f.field("steps"), None, "must be at least 1".into());
        }
        if let Some(w) = s.walkers {
            if w < 4 || w % 2 != 0 {
                c.push(
                    f.field("walkers"),
                    None,
                    format!("must be an even number ≥ 4, found {w}"),
                );
            }
        }
        if let Some(b) = s.burn_in {
            if b >= s.steps {
                c.push(
                    f.field("burn_in"),
                    None,
                    format!("must be below steps ({}), found {b}", s.steps),
                );
            }
        }
        if s.thin == Some(0) {
            c.push(f.field("thin"), None, "must be at least 1".into());
        }
        if s.checkpoint_every == Some(0) {
            c.push(
                f.field("checkpoint_every"),
                None,
                "must be at least 1".into(),
            );
        }
    }
    c.issues
}

/// Parameter fields a planet has in some model (see `fit::models`).
const PLANET_FIELDS: [&str; 7] = [
    "period",
    "semi_amplitude",
    "sqrt_e_cos_w",
    "sqrt_e_sin_w",
    "mean_longitude",
    "inclination",
    "node_difference",
];

/// Check the fit section: models listed, priors valid, override names that
/// can exist (planets of the run file; instruments when declared).
fn check_fit(c: &mut Checker, run: &RunFile, fit: &FitSection, f: &FieldPath) {
    if fit.models.is_empty() {
        c.push(
            f.field("models"),
            None,
            "must list at least one model".into(),
        );
    }
    match fit.integrator {
        IntegratorChoice::Symplectic(h) => c.number(
            f.field("integrator"),
            None,
            h,
            |x| x > 0.0,
            "a positive step in days",
        ),
        IntegratorChoice::GaussRadau(tol) => c.number(
            f.field("integrator"),
            None,
            tol,
            |x| x > 0.0 && x < 1.0,
            "a relative tolerance in (0, 1)",
        ),
        IntegratorChoice::SymplecticAuto => {}
    }
    for (k, o) in fit.priors.iter().enumerate() {
        let fp = f.field("priors").index(k);
        let name = o.parameter.as_str();
        let known = match name.split_once('.') {
            Some((owner, field)) => {
                let planet =
                    run.planets.iter().any(|p| p.name == owner) && PLANET_FIELDS.contains(&field);
                let inst = matches!(field, "offset" | "jitter")
                    && run
                        .instruments
                        .as_ref()
                        .is_none_or(|names| names.iter().any(|n| n == owner));
                let trend = owner == "trend" && matches!(field, "slope" | "curvature");
                planet || inst || trend
            }
            None => name == "sin_i",
        };
        if !known {
            let instruments = run
                .instruments
                .as_ref()
                .map_or(String::from("any"), |n| n.join(", "));
            c.push(
                fp.field("parameter"),
                None,
                format!(
                    "unknown parameter '{name}' (planets: {}; instruments: {instruments}; fields: {}, offset, jitter, sin_i, trend.slope, trend.curvature)",
                    run.planets.iter().map(|p| p.name.as_str()).collect::<Vec<_>>().join(", "),
                    PLANET_FIELDS.join(", ")
                ),
            );
        }
        if o.prior.is_none() && o.fixed.is_none() {
            c.push(
                fp.clone(),
                None,
                "give a prior, a fixed value, or both".into(),
            );
        }
        if let Some(p) = &o.prior {
            if let Err(e) = p.validate(name) {
                c.push(fp.field("prior"), None, e.to_string());
            } else if name.ends_with(".sqrt_e_cos_w") || name.ends_with(".sqrt_e_sin_w") {
                let (lo, hi) = p.support();
                if lo < -1.0 || hi > 1.0 {
                    c.push(fp.field("prior"), None, format!("√e cos ω⋆ and √e sin ω⋆ must stay within [−1, 1] (e < 1), found [{lo}, {hi}]"));
                }
            } else if name.ends_with(".inclination") {
                let (lo, hi) = p.support();
                if lo < 0.0 || hi > 180.0 {
                    c.push(fp.field("prior"), None, format!("an inclination prior must lie within [0, 180] degrees, found [{lo}, {hi}]"));
                }
            } else if name.ends_with(".jitter")
                || name.ends_with(".period")
                || name.ends_with(".semi_amplitude")
            {
                let (lo, _) = p.support();
                if lo < 0.0 {
                    c.push(
                        fp.field("prior"),
                        None,
                        format!("must not extend below 0, found lower bound {lo}"),
                    );
                }
            } else if name == "sin_i" {
                let (lo, hi) = p.support();
                if lo <= 0.0 || hi > 1.0 {
                    c.push(
                        fp.field("prior"),
                        None,
                        format!("sin i must lie within (0, 1], found [{lo}, {hi}]"),
                    );
                }
            }
        }
        if let Some(v) = o.fixed {
            c.number(fp.field("fixed"), None, v, |_| true, "");
        }
    }
}
