//! Axis helpers: ranges, the offset of large epochs, tick text.

/// Offset subtracted from epochs before drawing, so that ticks read
/// "0, 200, 400" instead of "2459200, 2459400": the axis label then says
/// `time − 2 459 000 [d]` (common practice in RV papers).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TimeOffset {
    /// The value subtracted from every epoch (same unit as the epochs).
    pub offset: f64,
}

impl TimeOffset {
    /// Chooses the offset for epochs spanning `[lo, hi]`.
    ///
    /// No offset when the values are small compared with their span
    /// (|lo| < 10⁴ and |lo| < 10 × span). Otherwise the offset is `lo`
    /// rounded down to a multiple of 10^⌊log₁₀ span⌋, so the drawn values
    /// run from a small number to about twice the span.
    pub fn choose(lo: f64, hi: f64) -> Self {
        let span = (hi - lo).abs();
        if !lo.is_finite() || !hi.is_finite() || (lo.abs() < 1e4 && lo.abs() < 10.0 * span) {
            return Self { offset: 0.0 };
        }
        let step = if span > 0.0 {
            10f64.powf(span.log10().floor().max(0.0))
        } else {
            1.0
        };
        Self {
            offset: (lo.min(hi) / step).floor() * step,
        }
    }

    /// Axis label `"{quantity} − {offset} [{unit}]"`, or
    /// `"{quantity} [{unit}]"` when there is no offset. The offset is written
    /// with its thousands grouped by spaces ("2 460 000").
    pub fn label(&self, quantity: &str, unit: &str) -> String {
        if self.offset == 0.0 {
            format!("{quantity} [{unit}]")
        } else {
            format!(
                "{quantity} \u{2212} {} [{unit}]",
                format_grouped(self.offset)
            )
        }
    }

    /// The drawn value of an epoch.
    pub fn apply(&self, t: f64) -> f64 {
        t - self.offset
    }
}

/// Writes `x` with thousands grouped by spaces: `2460000.5` → `"2 460 000.5"`
/// (SI/ISO 80000-1 digit grouping). Decimals are kept only where nonzero
/// (up to six).
pub fn format_grouped(x: f64) -> String {
    let neg = x < 0.0;
    let a = x.abs();
    let int = a.trunc();
    let frac = trim_number(&format!("{:.6}", a - int));
    let digits = format!("{int:.0}");
    let mut grouped = String::new();
    for (i, c) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i) % 3 == 0 {
            grouped.push(' ');
        }
        grouped.push(c);
    }
    let mut s = String::new();
    if neg {
        s.push('-');
    }
    s.push_str(&grouped);
    if frac != "0" {
        // `frac` reads "0.xxx"; keep the ".xxx".
        s.push_str(frac.trim_start_matches('0'));
    }
    s
}

/// Drops trailing zeros (and a trailing point) of a fixed-point number, and
/// writes "-0" as "0".
fn trim_number(s: &str) -> String {
    let t = if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.')
    } else {
        s
    };
    if t == "-0" || t.is_empty() {
        "0".to_string()
    } else {
        t.to_string()
    }
}

/// Tick text for a value on a linear axis of extent `span`: as many
/// decimals as the span needs (about four significant digits of the span),
/// trailing zeros dropped.
pub(crate) fn tick_label(v: f64, span: f64) -> String {
    let span = if span > 0.0 && span.is_finite() {
        span
    } else {
        1.0
    };
    let decimals = (3.0 - span.log10().floor()).clamp(0.0, 8.0) as usize;
    trim_number(&format!("{v:.decimals$}"))
}

/// Tick text with three significant digits, for logarithmic axes.
pub(crate) fn sig_label(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return "0".to_string();
    }
    let mag = v.abs().log10().floor();
    if !(-4.0..6.0).contains(&mag) {
        return format!("{v:.2e}");
    }
    let decimals = (2.0 - mag).max(0.0) as usize;
    trim_number(&format!("{v:.decimals$}"))
}

/// Extent of the finite values, or `None` when there is none.
pub(crate) fn finite_extent<I: IntoIterator<Item = f64>>(values: I) -> Option<(f64, f64)> {
    values
        .into_iter()
        .filter(|v| v.is_finite())
        .fold(None, |acc, v| match acc {
            None => Some((v, v)),
            Some((lo, hi)) => Some((lo.min(v), hi.max(v))),
        })
}

/// Widens `[lo, hi]` by `frac` of its span on both sides; a degenerate
/// range becomes ±(|v|·10 % or 1) around its value.
pub(crate) fn padded(lo: f64, hi: f64, frac: f64) -> (f64, f64) {
    let span = hi - lo;
    if span > 0.0 {
        (lo - frac * span, hi + frac * span)
    } else {
        let d = if lo != 0.0 { 0.1 * lo.abs() } else { 1.0 };
        (lo - d, hi + d)
    }
}

/// Merges two optional extents.
pub(crate) fn union(a: Option<(f64, f64)>, b: Option<(f64, f64)>) -> Option<(f64, f64)> {
    match (a, b) {
        (Some((a0, a1)), Some((b0, b1))) => Some((a0.min(b0), a1.max(b1))),
        (x, None) | (None, x) => x,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn offset_of_bjd_epochs() {
        let o = TimeOffset::choose(2_459_123.4, 2_460_650.0);
        assert_eq!(o.offset, 2_459_000.0);
        assert_eq!(o.label("time", "d"), "time \u{2212} 2 459 000 [d]");
        assert_eq!(TimeOffset::choose(0.0, 300.0).offset, 0.0);
        assert_eq!(
            TimeOffset::choose(2_460_010.2, 2_460_040.0).offset,
            2_460_010.0
        );
    }

    #[test]
    fn number_text() {
        assert_eq!(format_grouped(2_460_000.0), "2 460 000");
        assert_eq!(format_grouped(460_000.5), "460 000.5");
        assert_eq!(format_grouped(-1234.0), "-1 234");
        assert_eq!(tick_label(0.30000000000000004, 2.0), "0.3");
        assert_eq!(tick_label(-0.0000001, 100.0), "0");
        assert_eq!(tick_label(1200.0, 1600.0), "1200");
        assert_eq!(sig_label(12.345), "12.3");
        assert_eq!(sig_label(1000.0), "1000");
        assert_eq!(sig_label(0.5), "0.5");
    }
}
