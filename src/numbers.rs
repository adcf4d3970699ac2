//! Every way the program writes a number as text, in one place: the
//! explorer's tables and labels, the figures, the command line's tables and
//! the messages. Each style says what it is for; none prints "-0", and
//! [`clean`] turns rounding noise next to zero into zero for text (JSON and
//! CSV keep the full value through [`exact`]).

/// Values within this many rounding units of the scale they are measured
/// against are zero for text.
const NOISE_ULPS: f64 = 64.0;

/// `v`, or 0 when |v| is rounding noise against `scale` (a typical size of
/// the quantity: the window's extent for coordinates, the spread of H for
/// energies). A center at q = −2.96e-31 in a window of size 4 reads 0.
pub fn clean(v: f64, scale: f64) -> f64 {
    if v.is_finite() && scale.is_finite() && v.abs() <= NOISE_ULPS * f64::EPSILON * scale.abs() {
        0.0
    } else {
        v
    }
}

/// Full precision that Rust's parser reads back exactly (`NaN`, `inf`,
/// `-inf` for the non-finite ones): tables written to CSV and JSON.
pub fn exact(v: f64) -> String {
    format!("{v:?}")
}

/// `text` without a minus sign when it shows a zero ("-0.000" → "0.000").
fn unsigned_zero(text: String) -> String {
    match text.strip_prefix('-') {
        Some(rest) if rest.chars().all(|c| c == '0' || c == '.') => rest.to_string(),
        _ => text,
    }
}

/// `v` with `digits` decimals: the explorer's tables.
pub fn fixed(v: f64, digits: usize) -> String {
    unsigned_zero(format!("{v:.digits$}"))
}

/// Up to 6 significant digits, no trailing zeros, exponent form outside
/// [1e-4, 1e6): parameter values in captions.
pub fn caption(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{v}");
    }
    let mag = v.abs().log10().floor();
    if !(-4.0..6.0).contains(&mag) {
        return format!("{v:.4e}");
    }
    let decimals = (5.0 - mag).max(0.0) as usize;
    let mut s = format!("{v:.decimals$}");
    if s.contains('.') {
        while s.ends_with('0') {
            s.pop();
        }
        if s.ends_with('.') {
            s.pop();
        }
    }
    s
}

/// Plain digits (at most nine decimals) in the usual range, else with an
/// exponent, so that 1e300 is not written out in full: messages.
pub fn message(x: f64) -> String {
    if x == 0.0 || (1e-4..1e9).contains(&x.abs()) {
        format!("{}", (x * 1e9).round() / 1e9)
    } else {
        format!("{x:.6e}")
    }
}

/// A share in percent for a message: two decimals below 1 %, whole numbers above.
pub fn percent(pct: f64) -> String {
    if pct < 1.0 {
        format!("{pct:.2}")
    } else {
        format!("{pct:.0}")
    }
}

/// Five decimals in the usual range, else exponent form: values in the
/// labels of marks and choosers.
pub fn label(v: f64) -> String {
    let text = if v == 0.0 || (v.abs() >= 1e-3 && v.abs() < 1e5) {
        format!("{v:.5}")
    } else {
        format!("{v:.4e}")
    };
    unsigned_zero(text)
}

/// A tick label for `v` on an axis with tick spacing `step`: as many
/// decimals as the step needs, exponent form for very large or small values,
/// a true minus sign.
pub fn tick(v: f64, step: f64) -> String {
    let mag = step.abs().log10().floor();
    let text = if step > 0.0 && (mag < -4.0 || v.abs() >= 1e6) {
        format!("{v:.1e}")
    } else {
        let decimals = if mag < 0.0 { (-mag) as usize } else { 0 };
        format!("{v:.decimals$}")
    };
    text.replace('-', "\u{2212}")
}

/// A coordinate in a figure's markup: two decimals, trailing zeros dropped.
pub fn coordinate(v: f64) -> String {
    let mut s = format!("{v:.2}");
    while s.ends_with('0') {
        s.pop();
    }
    if s.ends_with('.') {
        s.pop();
    }
    if s == "-0" { "0".to_string() } else { s }
}

/// Six decimals, or six significant digits with an exponent outside
/// [1e-4, 1e6): the command line's text tables.
pub fn table(v: f64) -> String {
    let v = if v == 0.0 { 0.0 } else { v };
    if v.is_finite() && v != 0.0 && (v.abs() >= 1e6 || v.abs() < 1e-4) {
        format!("{v:.5e}")
    } else {
        format!("{v:.6}")
    }
}

/// A complex number in the style of [`table`]: `a`, `bi` or `a+bi`.
pub fn complex(re: f64, im: f64) -> String {
    let re = if re == 0.0 { 0.0 } else { re };
    if im == 0.0 {
        table(re)
    } else if re == 0.0 {
        format!("{}i", table(im))
    } else {
        let sign = if im < 0.0 { '-' } else { '+' };
        format!("{}{sign}{}i", table(re), table(im.abs()))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn noise_next_to_zero_is_zero_and_real_values_stay() {
        assert_eq!(clean(-2.95823e-31, 4.0), 0.0);
        assert_eq!(clean(1e-9, 4.0), 1e-9);
        assert_eq!(clean(f64::NAN, 1.0).is_nan(), true);
    }

    #[test]
    fn no_style_writes_minus_zero() {
        assert_eq!(fixed(-1e-17, 5), "0.00000");
        assert_eq!(label(-1e-9), "-1.0000e-9");
        assert_eq!(label(-0.0), "0.00000");
        assert_eq!(coordinate(-0.001), "0");
        assert_eq!(table(-0.0), "0.000000");
    }

    #[test]
    fn styles_keep_their_rules() {
        assert_eq!(caption(0.52), "0.52");
        assert_eq!(caption(1234567.0), "1.2346e6");
        assert_eq!(message(1e300), "1.000000e300");
        assert_eq!(tick(-0.5, 0.5), "\u{2212}0.5");
        assert_eq!(complex(0.0, -1.5), "-1.500000i");
    }
}
