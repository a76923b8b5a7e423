//! Sequential colour scales for heat maps, ordered in lightness so that a
//! grey print keeps their order.

use plotters::prelude::*;

/// A sequential colour scale mapping t ∈ \[0, 1\] to a colour whose
/// luminance grows with t (dark = low values, light = high values).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum ColourScale {
    /// "viridis" (van der Walt & Smith 2015; Nuñez, Anderton & Renslow 2018,
    /// PLoS ONE 13, e0199239), as the eight-point linear interpolation
    /// shipped by the `plotters` crate.
    #[default]
    Viridis,
    /// Linear grey ramp from RGB (35, 35, 35) to (235, 235, 235); stops short
    /// of white so that empty cells (white with a cross) stay distinct.
    Grey,
}

impl ColourScale {
    /// Colour at `t` (clamped into \[0, 1\]; a non-finite `t` gives the low
    /// end) as (r, g, b) bytes.
    pub fn rgb(self, t: f64) -> (u8, u8, u8) {
        let t = if t.is_finite() {
            t.clamp(0.0, 1.0)
        } else {
            0.0
        };
        match self {
            ColourScale::Viridis => {
                let c: RGBColor = ViridisRGB::get_color(t);
                (c.0, c.1, c.2)
            }
            ColourScale::Grey => {
                let v = (35.0 + 200.0 * t).round() as u8;
                (v, v, v)
            }
        }
    }

    /// Human-readable name of the scale (for captions).
    pub fn name(self) -> &'static str {
        match self {
            ColourScale::Viridis => "viridis",
            ColourScale::Grey => "grey ramp",
        }
    }
}

/// Relative luminance Y ∈ \[0, 1\] of an sRGB colour: linearise each channel
/// (IEC 61966-2-1 transfer function) and weight by 0.2126, 0.7152, 0.0722
/// (ITU-R BT.709 primaries; the definition used by WCAG 2.x).
pub fn relative_luminance(r: u8, g: u8, b: u8) -> f64 {
    fn lin(c: u8) -> f64 {
        let c = f64::from(c) / 255.0;
        if c <= 0.04045 {
            c / 12.92
        } else {
            ((c + 0.055) / 1.055).powf(2.4)
        }
    }
    0.2126 * lin(r) + 0.7152 * lin(g) + 0.0722 * lin(b)
}
