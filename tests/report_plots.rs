//! Pictures on synthetic data: well-formed SVG (parsed with roxmltree),
//! the title, axis labels and legend names present as text, enough drawn
//! elements for the input, no "NaN"/"inf" anywhere, escaping of names, and
//! a heat-map colour scale monotone in luminance.
//!
//! Set `APSIDAL_PLOT_DIR=/some/dir` to also keep the SVGs for viewing.

use apsidal::report::plot::*;

/// Parses the SVG, checks the root, and returns all text-node contents
/// (trimmed) and the count of each drawing element name.
struct Parsed {
    texts: Vec<String>,
    counts: std::collections::HashMap<String, usize>,
}

impl Parsed {
    fn count(&self, tag: &str) -> usize {
        self.counts.get(tag).copied().unwrap_or(0)
    }
    /// Elements that can carry a marker: circle, polygon, polyline, line, rect.
    fn shapes(&self) -> usize {
        ["circle", "polygon", "polyline", "line", "rect"]
            .iter()
            .map(|t| self.count(t))
            .sum()
    }
    fn has_text(&self, s: &str) -> bool {
        self.texts.iter().any(|t| t == s)
    }
    fn assert_texts(&self, wanted: &[&str]) {
        for w in wanted {
            assert!(
                self.has_text(w),
                "text {w:?} missing; texts: {:?}",
                self.texts
            );
        }
    }
}

fn check_svg(name: &str, svg: &str) -> Parsed {
    if let Ok(dir) = std::env::var("APSIDAL_PLOT_DIR") {
        std::fs::write(std::path::Path::new(&dir).join(format!("{name}.svg")), svg).unwrap();
    }
    let doc = roxmltree::Document::parse(svg).unwrap_or_else(|e| panic!("{name}: not XML: {e}"));
    let root = doc.root_element();
    assert_eq!(root.tag_name().name(), "svg");
    let vb = root.attribute("viewBox").expect("viewBox");
    assert!(vb.starts_with("0 0 "), "{vb}");
    for bad in ["NaN", "inf"] {
        assert!(!svg.contains(bad), "{name}: contains {bad}");
    }
    let mut texts = Vec::new();
    let mut counts = std::collections::HashMap::new();
    for n in doc.descendants().filter(|n| n.is_element()) {
        *counts.entry(n.tag_name().name().to_string()).or_insert(0) += 1;
        if n.tag_name().name() == "text" {
            texts.push(n.text().unwrap_or("").trim().to_string());
        }
    }
    Parsed { texts, counts }
}

/// Deterministic pseudo-noise in [−1, 1]: the SplitMix64 finaliser
/// (Steele, Lea & Flood 2014) of the index, so neighbouring indices are
/// uncorrelated.
fn noise(i: usize) -> f64 {
    let mut z = (i as u64).wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^= z >> 31;
    ((z >> 11) as f64 / (1u64 << 53) as f64) * 2.0 - 1.0
}

fn kep(t: f64) -> f64 {
    let tau = std::f64::consts::TAU;
    42.0 * (tau * t / 12.3).sin() + 15.0 * (tau * t / 87.0 + 1.0).cos()
}

#[test]
fn rv_time_series_two_instruments_two_models() {
    let t0 = 2_459_123.37;
    let ta: Vec<f64> = (0..40)
        .map(|i| t0 + 13.7 * i as f64 + 3.0 * noise(i))
        .collect();
    let tb: Vec<f64> = (0..25).map(|i| t0 + 250.0 + 19.1 * i as f64).collect();
    let mk = |t: &[f64], k: usize| -> (Vec<f64>, Vec<f64>, Vec<f64>) {
        let e: Vec<f64> = (0..t.len())
            .map(|i| 2.0 + noise(i + k).abs() * 3.0)
            .collect();
        let r: Vec<f64> = (0..t.len()).map(|i| e[i] * noise(i + 100 + k)).collect();
        let v: Vec<f64> = t.iter().zip(&r).map(|(&t, &r)| kep(t) + r).collect();
        (v, e, r)
    };
    let (mut va, ea, ra) = mk(&ta, 0);
    va[3] = f64::NAN; // skipped, never written
    let (vb, eb, rb) = mk(&tb, 7);
    let tm: Vec<f64> = (0..1200).map(|i| t0 - 10.0 + i as f64 * 0.6).collect();
    let mut vk: Vec<f64> = tm.iter().map(|&t| kep(t)).collect();
    vk[600] = f64::NAN; // breaks the curve, never written
    vk[601] = f64::NEG_INFINITY;
    let vd: Vec<f64> = tm
        .iter()
        .map(|&t| kep(t) + 4.0 * ((t - t0) / 700.0))
        .collect();
    let ins = [
        RvPoints {
            name: "Aurora-S",
            time: &ta,
            rv: &va,
            error: &ea,
            residual: &ra,
        },
        RvPoints {
            name: "Halcyon & <co>",
            time: &tb,
            rv: &vb,
            error: &eb,
            residual: &rb,
        },
    ];
    let models = [
        ModelCurve {
            name: "Keplerian",
            time: &tm,
            rv: &vk,
        },
        ModelCurve {
            name: "dynamical",
            time: &tm,
            rv: &vd,
        },
    ];
    let plot = RvTimeSeriesPlot {
        title: "Vesper-17: radial velocities",
        time_scale: "BJD_TDB",
        instruments: &ins,
        models: &models,
        size: PlotSize::default(),
    };
    let svg = rv_time_series(&plot).unwrap();
    let p = check_svg("rv_time_series", &svg);
    p.assert_texts(&[
        "Vesper-17: radial velocities",
        "RV [m/s]",
        "O \u{2212} C [m/s]",
        "time (BJD_TDB) \u{2212} 2 459 100 [d]",
        "Aurora-S",
        "Halcyon & <co>",
        "Keplerian",
        "dynamical",
    ]);
    // Escaped in the file, unescaped in the text node.
    assert!(svg.contains("Halcyon &amp; &lt;co&gt;"));
    // 39 + 25 finite points, drawn in the data panel and the residual panel
    // (plus legend samples): Aurora-S as filled circles.
    assert!(p.count("circle") >= 2 * 39, "{}", p.count("circle"));
    assert!(p.shapes() >= 2 * (39 + 25) * 2);
}

#[test]
fn rv_time_series_refuses_empty_and_mismatched() {
    let nan = [f64::NAN, f64::NAN];
    let ok = [1.0, 2.0];
    let ins = [RvPoints {
        name: "Aurora-S",
        time: &ok,
        rv: &nan,
        error: &ok,
        residual: &[],
    }];
    let plot = RvTimeSeriesPlot {
        title: "t",
        time_scale: "BJD_TDB",
        instruments: &ins,
        models: &[],
        size: PlotSize::default(),
    };
    assert!(matches!(
        rv_time_series(&plot),
        Err(PlotError::EmptySeries { .. })
    ));
    let short = [1.0];
    let ins = [RvPoints {
        name: "Aurora-S",
        time: &ok,
        rv: &short,
        error: &ok,
        residual: &[],
    }];
    let plot = RvTimeSeriesPlot {
        instruments: &ins,
        ..plot
    };
    assert!(matches!(
        rv_time_series(&plot),
        Err(PlotError::LengthMismatch { .. })
    ));
    let plot = RvTimeSeriesPlot {
        instruments: &[],
        ..plot
    };
    assert!(matches!(
        rv_time_series(&plot),
        Err(PlotError::EmptySeries { .. })
    ));
}

#[test]
fn phase_fold_one_planet() {
    let n = 60;
    let ph: Vec<f64> = (0..n).map(|i| (i as f64 * 0.618_034) % 1.0).collect();
    let e: Vec<f64> = vec![3.0; n];
    let v: Vec<f64> = ph
        .iter()
        .enumerate()
        .map(|(i, &p)| 42.0 * (std::f64::consts::TAU * p).sin() + 3.0 * noise(i))
        .collect();
    let (v1, v2) = v.split_at(35);
    let mp: Vec<f64> = (0..400).map(|i| (i as f64 / 400.0 + 0.3) % 1.0).collect();
    let mv: Vec<f64> = mp
        .iter()
        .map(|&p| 42.0 * (std::f64::consts::TAU * p).sin())
        .collect();
    let ins = [
        PhasePoints {
            name: "Aurora-S",
            phase: &ph[..35],
            rv: v1,
            error: &e[..35],
        },
        PhasePoints {
            name: "Halcyon",
            phase: &ph[35..],
            rv: v2,
            error: &e[35..],
        },
    ];
    let svg = phase_fold_plot(&PhaseFoldPlot {
        title: "Vesper-17 b, P = 12.30 d",
        instruments: &ins,
        model_name: "Keplerian, planet b",
        model_phase: &mp,
        model_rv: &mv,
        size: PlotSize::default(),
    })
    .unwrap();
    let p = check_svg("phase_fold", &svg);
    p.assert_texts(&[
        "Vesper-17 b, P = 12.30 d",
        "orbital phase [cycles]",
        "RV \u{2212} other signals [m/s]",
        "Aurora-S",
        "Halcyon",
        "Keplerian, planet b",
    ]);
    assert!(p.count("circle") >= 35);
    assert!(p.count("polygon") >= 25);
}

#[test]
fn periodogram_three_peeling_steps() {
    // Synthetic spectra over 1.5–3000 d (log grid) with a peak per step.
    let n = 6000;
    let period: Vec<f64> = (0..n)
        .map(|i| 1.5 * (3000.0f64 / 1.5).powf(i as f64 / (n - 1) as f64))
        .collect();
    let peaks = [12.3, 87.0, 410.0];
    let panels_power: Vec<Vec<f64>> = (0..3)
        .map(|k| {
            period
                .iter()
                .enumerate()
                .map(|(i, &p)| {
                    let bump: f64 = peaks[k..]
                        .iter()
                        .enumerate()
                        .map(|(m, &pk)| {
                            (0.7 - 0.2 * m as f64) * (-((p / pk).ln() / 0.01).powi(2)).exp()
                        })
                        .sum();
                    0.05 + 0.04 * noise(i + 1000 * k).abs() + bump
                })
                .collect()
        })
        .collect();
    let mut with_nan = panels_power[2].clone();
    with_nan[10] = f64::NAN;
    with_nan[11] = f64::INFINITY;
    let levels = [
        FapLevel {
            label: "FAP 10 %",
            power: 0.2,
        },
        FapLevel {
            label: "FAP 1 %",
            power: 0.26,
        },
        FapLevel {
            label: "FAP 0.1 %",
            power: 0.32,
        },
    ];
    let titles = [
        "data",
        "residuals after 12.3 d",
        "residuals after 12.3 d, 87 d",
    ];
    let panels: Vec<PeriodogramPanel> = (0..3)
        .map(|k| PeriodogramPanel {
            title: titles[k],
            period: &period,
            power: if k == 2 { &with_nan } else { &panels_power[k] },
            fap_levels: &levels,
            peak_period: Some(peaks[k]),
        })
        .collect();
    let svg = periodogram_plot(&PeriodogramPlot {
        title: "Vesper-17: periodograms of the peeling steps",
        power_label: "GLS power [normalised]",
        panels: &panels,
        size: PeriodogramPlot::suggested_size(3),
    })
    .unwrap();
    let p = check_svg("periodogram", &svg);
    p.assert_texts(&[
        "Vesper-17: periodograms of the peeling steps",
        "GLS power [normalised]",
        "period [d]",
        "data",
        "residuals after 12.3 d",
        "residuals after 12.3 d, 87 d",
        "FAP 10 %",
        "FAP 1 %",
        "FAP 0.1 %",
        "peak 12.3 d",
        "peak 87 d",
        "peak 410 d",
    ]);
    // Envelope decimation keeps the file small but not empty: one spectrum
    // polyline per panel, each ≤ 2 points a column.
    assert!(svg.len() < 600_000, "{}", svg.len());
    assert!(p.count("polyline") >= 3);
    for k in 0..3 {
        assert_eq!(
            p.texts.iter().filter(|t| t.starts_with("FAP ")).count(),
            9,
            "panel {k}"
        );
    }
    // Log axis: decades appear as tick text.
    assert!(p.has_text("10") && p.has_text("100") && p.has_text("1000"));
}

#[test]
fn angles_wrap_and_count() {
    let t: Vec<f64> = (0..500).map(|i| i as f64 * 0.2).collect();
    let lib: Vec<f64> = t.iter().map(|&t| 180.0 + 40.0 * (t / 7.0).sin()).collect();
    let circ: Vec<f64> = t.iter().map(|&t| 25.0 * t - 400.0).collect();
    let mut circ_nan = circ.clone();
    circ_nan[7] = f64::NAN;
    let series = [
        AngleSeries {
            name: "\u{03c6}\u{2081} = 2\u{03bb}\u{2082} \u{2212} \u{03bb}\u{2081} \u{2212} \u{03d6}\u{2081}",
            time: &t,
            angle_deg: &lib,
        },
        AngleSeries {
            name: "\u{0394}\u{03d6}",
            time: &t,
            angle_deg: &circ_nan,
        },
    ];
    for (range, name, ticks) in [
        (AngleRange::ZeroTo360, "angles_360", ["0", "180", "360"]),
        (AngleRange::Symmetric180, "angles_180", ["-180", "0", "180"]),
    ] {
        let svg = angle_plot(&AnglePlot {
            title: "Vesper-17 b/c: resonant angle and \u{0394}\u{03d6}",
            time_label: "time since reference epoch",
            series: &series,
            range,
            size: PlotSize::default(),
        })
        .unwrap();
        let p = check_svg(name, &svg);
        p.assert_texts(&[
            "Vesper-17 b/c: resonant angle and \u{0394}\u{03d6}",
            "time since reference epoch [yr]",
            "angle [deg]",
            series[0].name,
            series[1].name,
        ]);
        p.assert_texts(&ticks);
        // 500 filled circles + legend; 499 open squares = polygon + polyline.
        assert!(p.count("circle") >= 500);
        assert!(p.count("polygon") >= 499);
        // Points, not lines: no polyline with more than 5 vertices.
        let doc = roxmltree::Document::parse(&svg).unwrap();
        for n in doc.descendants().filter(|n| n.has_tag_name("polyline")) {
            let pts = n.attribute("points").unwrap().split_whitespace().count();
            assert!(pts <= 5, "a line of {pts} points");
        }
    }
    assert_eq!(AngleRange::Symmetric180.wrap(190.0), -170.0);
    assert_eq!(AngleRange::ZeroTo360.wrap(-90.0), 270.0);
}

#[test]
fn divergence_with_band_horizon_and_span() {
    let t0 = 2_460_000.0;
    let t: Vec<f64> = (0..800).map(|i| t0 - 300.0 + i as f64 * 5.0).collect();
    let dv: Vec<f64> = t
        .iter()
        .map(|&t| 0.5e-5 * (t - t0).powi(2) * ((t - t0) / 40.0).sin())
        .collect();
    let svg = divergence_plot(&DivergencePlot {
        title: "Vesper-17: dynamical minus Keplerian",
        time_scale: "BJD_TDB",
        time: &t,
        delta_v: &dv,
        threshold: 2.5,
        horizon: Some(t0 + 740.0),
        data_span: Some((t0 - 300.0, t0 + 400.0)),
        size: PlotSize::default(),
    })
    .unwrap();
    let p = check_svg("divergence", &svg);
    p.assert_texts(&[
        "Vesper-17: dynamical minus Keplerian",
        "v_dyn \u{2212} v_kep [m/s]",
        "v_dyn \u{2212} v_kep",
        "\u{00b1}2.5 m/s threshold",
        "data span",
        "divergence horizon",
        "time (BJD_TDB) \u{2212} 2 459 000 [d]",
    ]);
    assert!(p.texts.iter().any(|t| t.starts_with("horizon ")));
    assert!(matches!(
        divergence_plot(&DivergencePlot {
            title: "x",
            time_scale: "BJD_TDB",
            time: &t,
            delta_v: &dv,
            threshold: f64::NAN,
            horizon: None,
            data_span: None,
            size: PlotSize::default(),
        }),
        Err(PlotError::InvalidSetting { .. })
    ));
}

/// (r, g, b) of a "#RRGGBB" fill.
fn rgb_of(hex: &str) -> (u8, u8, u8) {
    let h = hex.trim_start_matches('#');
    let c = |i: usize| u8::from_str_radix(&h[i..i + 2], 16).unwrap();
    (c(0), c(2), c(4))
}

#[test]
fn heat_map_megno_grid() {
    let (nx, ny) = (40, 25);
    let mut values = Vec::with_capacity(nx * ny);
    for j in 0..ny {
        for i in 0..nx {
            let (x, y) = (i as f64 / nx as f64, j as f64 / ny as f64);
            // Regular (2) at low e, chaotic (up to ~12, clipped) at high e.
            values.push(2.0 + 10.0 * (y * y * (1.0 + 0.5 * (12.0 * x).sin())).max(0.0));
        }
    }
    values[5] = f64::NAN;
    values[nx * 10 + 3] = f64::INFINITY;
    for scale in [ColourScale::Viridis, ColourScale::Grey] {
        let plot = HeatMapPlot {
            title: "Vesper-17: MEGNO over P_c \u{00d7} e_c",
            x: GridAxis {
                label: "P_c [d]",
                min: 80.0,
                max: 100.0,
                count: nx,
            },
            y: GridAxis {
                label: "e_c [1]",
                min: 0.0,
                max: 0.6,
                count: ny,
            },
            values: &values,
            value_label: "\u{27e8}Y\u{27e9} (MEGNO)",
            clip: (2.0, 8.0),
            scale,
            size: PlotSize::default(),
        };
        let svg = heat_map(&plot).unwrap();
        let p = check_svg(
            &format!("heat_map_{}", scale.name().replace(' ', "_")),
            &svg,
        );
        p.assert_texts(&[
            plot.title,
            "P_c [d]",
            "e_c [1]",
            "\u{27e8}Y\u{27e9} (MEGNO), clipped to [2, 8]",
            "no value",
        ]);
        // One rect per finite cell, 64 colour-bar bands, frames, background.
        assert!(p.count("rect") >= nx * ny - 2 + 64);
        // Grey-printable: the colour-bar bands, read bottom (low) to top
        // (high), rise in relative luminance. They are the filled rects of
        // the right-hand strip (x beyond the map).
        let doc = roxmltree::Document::parse(&svg).unwrap();
        let mut bands: Vec<(f64, f64)> = doc
            .descendants()
            .filter(|n| n.has_tag_name("rect"))
            .filter(|n| n.attribute("x").unwrap().parse::<f64>().unwrap() > 800.0)
            .filter(|n| n.attribute("fill").is_some_and(|f| f.starts_with('#')))
            .map(|n| {
                let y: f64 = n.attribute("y").unwrap().parse().unwrap();
                let (r, g, b) = rgb_of(n.attribute("fill").unwrap());
                (y, relative_luminance(r, g, b))
            })
            .filter(|&(_, l)| l < 0.999) // white boxes of the "no value" key
            .collect();
        assert!(bands.len() >= 64, "{}", bands.len());
        bands.sort_by(|a, b| b.0.total_cmp(&a.0)); // bottom first
        for w in bands.windows(2) {
            assert!(w[1].1 >= w[0].1, "luminance falls: {:?}", w);
        }
        // And the scale itself, sampled finely.
        let lum: Vec<f64> = (0..=1000)
            .map(|k| {
                let (r, g, b) = scale.rgb(k as f64 / 1000.0);
                relative_luminance(r, g, b)
            })
            .collect();
        // Rounding each channel to 8 bits lets neighbouring samples of the
        // interpolated viridis dip by up to ~3e-4 in luminance (the three
        // channels cross their rounding steps at different t); allow 1e-3,
        // far below a visible step, and require a strict rise over every
        // 1/16 of the scale.
        assert!(lum.windows(2).all(|w| w[1] >= w[0] - 1e-3));
        assert!(
            lum.iter()
                .step_by(1000 / 16)
                .collect::<Vec<_>>()
                .windows(2)
                .all(|w| w[1] > w[0])
        );
        assert!(lum[1000] - lum[0] > 0.4);
    }
    // Check of the luminance formula: sRGB white 1, black 0, and pure
    // green 0.7152 (the BT.709 weight; WCAG 2.x definition).
    assert!((relative_luminance(255, 255, 255) - 1.0).abs() < 1e-12);
    assert_eq!(relative_luminance(0, 0, 0), 0.0);
    assert!((relative_luminance(0, 255, 0) - 0.7152).abs() < 1e-12);
}

fn gauss(i: usize) -> f64 {
    // Sum of four uniforms: near-Gaussian, deterministic.
    (0..4).map(|k| noise(4 * i + k)).sum::<f64>() * 0.866
}

#[test]
fn posterior_histograms_and_pairs() {
    let n = 3000;
    let pb: Vec<f64> = (0..n).map(|i| 12.3 + 0.01 * gauss(i)).collect();
    let kb: Vec<f64> = (0..n)
        .map(|i| 42.0 + 1.5 * gauss(i + n) + 30.0 * (pb[i] - 12.3))
        .collect();
    let mut eb: Vec<f64> = (0..n)
        .map(|i| (0.1 + 0.03 * gauss(i + 2 * n)).abs())
        .collect();
    eb[17] = f64::NAN;
    let mc: Vec<f64> = (0..n).map(|i| 0.8 + 0.1 * gauss(i + 3 * n)).collect();
    let params = [
        ParameterSamples {
            name: "P_b",
            unit: "d",
            samples: &pb,
        },
        ParameterSamples {
            name: "K_b",
            unit: "m/s",
            samples: &kb,
        },
        ParameterSamples {
            name: "e_b",
            unit: "1",
            samples: &eb,
        },
        ParameterSamples {
            name: "m_c & <sin i>",
            unit: "M_Jup",
            samples: &mc,
        },
    ];
    let svg = histogram_grid(&HistogramGridPlot {
        title: "Vesper-17: posterior",
        parameters: &params,
        bins: 30,
        columns: 2,
        size: PlotSize::new(960, 720),
    })
    .unwrap();
    let p = check_svg("histograms", &svg);
    p.assert_texts(&[
        "Vesper-17: posterior",
        "P_b [d]",
        "K_b [m/s]",
        "e_b [1]",
        "m_c & <sin i> [M_Jup]",
        "samples [count]",
    ]);
    assert!(svg.contains("m_c &amp; &lt;sin i&gt; [M_Jup]"));
    assert!(p.count("rect") >= 4 * 10);

    for (style, name) in [
        (PairStyle::Points { max_points: 800 }, "pairs_points"),
        (PairStyle::Density { bins: 20 }, "pairs_density"),
    ] {
        let svg = pair_plot(&PairPlot {
            title: "Vesper-17: pairs",
            parameters: &params,
            bins: 30,
            style,
            size: PlotSize::new(960, 960),
        })
        .unwrap();
        let p = check_svg(name, &svg);
        p.assert_texts(&[
            "Vesper-17: pairs",
            "P_b [d]",
            "K_b [m/s]",
            "e_b [1]",
            "m_c & <sin i> [M_Jup]",
        ]);
        match style {
            // 6 panels × ≥ 750 dots (every 4th of 3000 draws).
            PairStyle::Points { .. } => assert!(p.count("circle") >= 6 * 750),
            PairStyle::Density { .. } => assert!(p.count("rect") >= 6 * 20),
        }
    }
    let short = [1.0, 2.0];
    let bad = [
        params[0],
        ParameterSamples {
            name: "x",
            unit: "",
            samples: &short,
        },
    ];
    assert!(matches!(
        pair_plot(&PairPlot {
            title: "x",
            parameters: &bad,
            bins: 10,
            style: PairStyle::Density { bins: 10 },
            size: PlotSize::default(),
        }),
        Err(PlotError::LengthMismatch { .. })
    ));
    let empty_s = [ParameterSamples {
        name: "x",
        unit: "",
        samples: &[f64::NAN],
    }];
    assert!(matches!(
        histogram_grid(&HistogramGridPlot {
            title: "x",
            parameters: &empty_s,
            bins: 10,
            columns: 1,
            size: PlotSize::default(),
        }),
        Err(PlotError::EmptySeries { .. })
    ));
}

#[test]
fn empty_inputs_are_typed_errors() {
    let nan = [f64::NAN; 3];
    let ok = [1.0, 2.0, 3.0];
    let e = |r: Result<String, PlotError>| matches!(r, Err(PlotError::EmptySeries { .. }));
    assert!(e(periodogram_plot(&PeriodogramPlot {
        title: "x",
        power_label: "power",
        panels: &[],
        size: PlotSize::default(),
    })));
    let neg = [-1.0, 0.0, f64::NAN];
    assert!(e(periodogram_plot(&PeriodogramPlot {
        title: "x",
        power_label: "power",
        panels: &[PeriodogramPanel {
            title: "p",
            period: &neg, // no positive finite period
            power: &ok,
            fap_levels: &[],
            peak_period: None,
        }],
        size: PlotSize::default(),
    })));
    assert!(e(angle_plot(&AnglePlot {
        title: "x",
        time_label: "t",
        series: &[AngleSeries {
            name: "a",
            time: &ok,
            angle_deg: &nan,
        }],
        range: AngleRange::ZeroTo360,
        size: PlotSize::default(),
    })));
    assert!(e(divergence_plot(&DivergencePlot {
        title: "x",
        time_scale: "BJD_TDB",
        time: &ok,
        delta_v: &nan,
        threshold: 1.0,
        horizon: None,
        data_span: None,
        size: PlotSize::default(),
    })));
    assert!(e(phase_fold_plot(&PhaseFoldPlot {
        title: "x",
        instruments: &[PhasePoints {
            name: "a",
            phase: &ok,
            rv: &ok,
            error: &ok,
        }],
        model_name: "m",
        model_phase: &nan,
        model_rv: &ok,
        size: PlotSize::default(),
    })));
    let axis = GridAxis {
        label: "x",
        min: 0.0,
        max: 1.0,
        count: 2,
    };
    let four = [1.0; 4];
    let bad_clip = heat_map(&HeatMapPlot {
        title: "x",
        x: axis,
        y: axis,
        values: &four,
        value_label: "v",
        clip: (8.0, 2.0),
        scale: ColourScale::Grey,
        size: PlotSize::default(),
    });
    assert!(matches!(bad_clip, Err(PlotError::InvalidSetting { .. })));
    let wrong_len = heat_map(&HeatMapPlot {
        title: "x",
        x: axis,
        y: axis,
        values: &ok,
        value_label: "v",
        clip: (2.0, 8.0),
        scale: ColourScale::Grey,
        size: PlotSize::default(),
    });
    assert!(matches!(wrong_len, Err(PlotError::LengthMismatch { .. })));
    // An all-missing grid is still a picture: every cell drawn as missing.
    let svg = heat_map(&HeatMapPlot {
        title: "x",
        x: axis,
        y: axis,
        values: &[f64::NAN; 4],
        value_label: "v",
        clip: (2.0, 8.0),
        scale: ColourScale::Grey,
        size: PlotSize::default(),
    })
    .unwrap();
    check_svg("heat_map_missing", &svg);
    let tiny = PlotSize::new(50, 50);
    assert!(matches!(
        angle_plot(&AnglePlot {
            title: "x",
            time_label: "t",
            series: &[AngleSeries {
                name: "a",
                time: &ok,
                angle_deg: &ok,
            }],
            range: AngleRange::ZeroTo360,
            size: tiny,
        }),
        Err(PlotError::InvalidSetting { .. })
    ));
}
