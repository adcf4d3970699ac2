//! The project's colours measured with colour science written here from its
//! published definitions, independent of `src/scene.rs`: the energy scale
//! rises strictly in lightness, evenly, without a red–green turn; orbit
//! colours in turn stay apart in normal and simulated dichromat vision and
//! stand out from the level curves.

use phasewright::scene::{self, ENERGY_STOPS, ORBIT_COLOURS, Rgb, energy_colour};

/// sRGB component to linear light: the IEC 61966-2-1:1999 transfer curve.
fn linear(v: u8) -> f64 {
    let v = f64::from(v) / 255.0;
    if v <= 0.04045 {
        v / 12.92
    } else {
        ((v + 0.055) / 1.055).powf(2.4)
    }
}

fn linear_rgb(c: Rgb) -> [f64; 3] {
    [linear(c.0), linear(c.1), linear(c.2)]
}

/// OKLab [L, a, b] of linear sRGB: the two matrices and the cube root of
/// B. Ottosson, "A perceptual color space for image processing" (2020),
/// section "Converting from linear sRGB to OKLab".
fn oklab_of_linear([r, g, b]: [f64; 3]) -> [f64; 3] {
    let l = 0.412_221_470_8 * r + 0.536_332_536_3 * g + 0.051_445_992_9 * b;
    let m = 0.211_903_498_2 * r + 0.680_699_545_1 * g + 0.107_396_956_6 * b;
    let s = 0.088_302_461_9 * r + 0.281_718_837_6 * g + 0.629_978_700_5 * b;
    let (l, m, s) = (l.cbrt(), m.cbrt(), s.cbrt());
    [
        0.210_454_255_3 * l + 0.793_617_785_0 * m - 0.004_072_046_8 * s,
        1.977_998_495_1 * l - 2.428_592_205_0 * m + 0.450_593_709_9 * s,
        0.025_904_037_1 * l + 0.782_771_766_2 * m - 0.808_675_766_0 * s,
    ]
}

fn oklab(c: Rgb) -> [f64; 3] {
    oklab_of_linear(linear_rgb(c))
}

/// OKLCh: lightness, chroma and hue in degrees [0, 360) (same source).
fn oklch(c: Rgb) -> [f64; 3] {
    let [l, a, b] = oklab(c);
    [l, a.hypot(b), b.atan2(a).to_degrees().rem_euclid(360.0)]
}

/// Colour difference: Euclidean distance in OKLab (same source: the space is
/// built so that this distance predicts perceived difference).
fn delta_e(a: [f64; 3], b: [f64; 3]) -> f64 {
    ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)).sqrt()
}

/// CIE 1976 L* of an sRGB colour: Y from the Rec. 709 / sRGB luminance
/// weights, then L* = 116 f(Y/Yn) − 16 with the linear part below
/// (6/29)³ (CIE 15:2004, section 8.2.1).
fn cie_lightness(c: Rgb) -> f64 {
    let [r, g, b] = linear_rgb(c);
    let y = 0.2126 * r + 0.7152 * g + 0.0722 * b;
    if y > 216.0 / 24389.0 {
        116.0 * y.cbrt() - 16.0
    } else {
        y * 24389.0 / 27.0
    }
}

/// Dichromat vision simulated in linear sRGB by the projection of
/// F. Viénot, H. Brettel & J. D. Mollon, "Digital video colourmaps for
/// checking the legibility of displays by dichromats", Color Research and
/// Application 24 (1999). The matrix entries are recalled from memory.
fn dichromat(c: Rgb, m: [[f64; 3]; 3]) -> [f64; 3] {
    let v = linear_rgb(c);
    let row = |r: [f64; 3]| (r[0] * v[0] + r[1] * v[1] + r[2] * v[2]).clamp(0.0, 1.0);
    oklab_of_linear([row(m[0]), row(m[1]), row(m[2])])
}
const PROTAN: [[f64; 3]; 3] = [
    [0.112_38, 0.887_62, 0.0],
    [0.112_38, 0.887_62, 0.0],
    [0.004_01, -0.004_01, 1.0],
];
const DEUTAN: [[f64; 3]; 3] = [
    [0.292_75, 0.707_25, 0.0],
    [0.292_75, 0.707_25, 0.0],
    [-0.022_34, 0.022_34, 1.0],
];

/// The energy scale sampled at 101 evenly spaced positions.
fn energy_samples() -> Vec<Rgb> {
    (0..=100).map(|i| energy_colour(i as f64 / 100.0)).collect()
}

#[test]
fn oklab_conversion_matches_the_published_values() {
    // White is L = 1, a = b = 0 by construction (Ottosson 2020). The sRGB
    // primaries red = (0.627955, 0.224863, 0.125846) and blue = (0.452014,
    // −0.032457, −0.311528): the OKLab values of W3C CSS Color Module
    // Level 4's worked examples (recalled from memory).
    let white = oklab(Rgb(255, 255, 255));
    assert!((white[0] - 1.0).abs() < 1e-4 && white[1].abs() < 1e-4 && white[2].abs() < 1e-4);
    let red = oklab(Rgb(255, 0, 0));
    assert!(
        delta_e(red, [0.627_955, 0.224_863, 0.125_846]) < 2e-3,
        "{red:?}"
    );
    let blue = oklab(Rgb(0, 0, 255));
    assert!(
        delta_e(blue, [0.452_014, -0.032_457, -0.311_528]) < 2e-3,
        "{blue:?}"
    );
    // CIE 15:2004: L* of white is 100, of mid grey (Y = 0.18) about 49.5.
    assert!((cie_lightness(Rgb(255, 255, 255)) - 100.0).abs() < 1e-9);
    let grey = cie_lightness(Rgb(118, 118, 118));
    assert!((grey - 49.5).abs() < 0.5, "{grey}");
}

#[test]
fn energy_scale_rises_strictly_in_lightness() {
    let samples = energy_samples();
    for (i, w) in samples.windows(2).enumerate() {
        let (l0, l1) = (oklab(w[0])[0], oklab(w[1])[0]);
        assert!(
            l1 > l0 + 1e-3,
            "OKLab L falls or stalls between t = {} and {}: {l0} then {l1}",
            i as f64 / 100.0,
            (i + 1) as f64 / 100.0
        );
        let (c0, c1) = (cie_lightness(w[0]), cie_lightness(w[1]));
        assert!(
            c1 > c0,
            "CIE L* falls at t = {}: {c0} then {c1}",
            i as f64 / 100.0
        );
    }
    let lo = oklab(samples[0])[0];
    let hi = oklab(samples[100])[0];
    // Dark enough at the bottom to read as the deepest level, and the top
    // still a visible line on white (L at most 0.8: common practice).
    assert!(hi - lo > 0.45, "lightness spans only {lo}..{hi}");
    assert!(
        hi <= 0.81,
        "the top of the scale (L = {hi}) fades on white paper"
    );
}

#[test]
fn energy_scale_lightness_is_even() {
    // Equal steps in t give equal steps in L: each eighth of the scale rises
    // by 0.0625 ± 0.005.
    for w in ENERGY_STOPS.windows(2) {
        let step = oklab(w[1].1)[0] - oklab(w[0].1)[0];
        let dt = w[1].0 - w[0].0;
        assert!(
            (step / dt - 0.5).abs() < 0.04,
            "L rises {step} over t {}..{}",
            w[0].0,
            w[1].0
        );
    }
}

#[test]
fn energy_scale_never_turns_through_yellow_or_green() {
    // The hue of every chromatic stop lies in the violet half of the circle
    // (OKLab hue 230°–360° or 0°–20°), so no two energies differ by a red–green
    // contrast alone; and the hue turns one way only, warm to cool.
    let mut unwrapped = Vec::new();
    for (t, c) in ENERGY_STOPS {
        let [_, chroma, h] = oklch(c);
        assert!(chroma > 0.05, "stop {t} is nearly grey (C = {chroma})");
        assert!(
            !(20.0..230.0).contains(&h),
            "stop {t} ({}) has hue {h}°, in the yellow–green half",
            c.hex()
        );
        unwrapped.push(if h < 180.0 { h + 360.0 } else { h });
    }
    for w in unwrapped.windows(2) {
        assert!(w[1] < w[0], "the hue turns back: {} then {}", w[0], w[1]);
    }
}

#[test]
fn orbit_colours_in_turn_stay_apart() {
    let n = ORBIT_COLOURS.len();
    for i in 0..n {
        let (a, b) = (ORBIT_COLOURS[i], ORBIT_COLOURS[(i + 1) % n]);
        let normal = delta_e(oklab(a), oklab(b));
        let protan = delta_e(dichromat(a, PROTAN), dichromat(b, PROTAN));
        let deutan = delta_e(dichromat(a, DEUTAN), dichromat(b, DEUTAN));
        // 0.15 in OKLab is far above the just-noticeable difference (about
        // 0.02; common practice), a difference read at a glance.
        assert!(normal >= 0.15, "{} and {}: ΔE {normal}", a.hex(), b.hex());
        assert!(
            protan >= 0.15,
            "{} and {} (protan): ΔE {protan}",
            a.hex(),
            b.hex()
        );
        assert!(
            deutan >= 0.15,
            "{} and {} (deutan): ΔE {deutan}",
            a.hex(),
            b.hex()
        );
    }
}

#[test]
fn orbit_colours_stand_out_from_level_curves_and_read_on_white() {
    let scale = energy_samples();
    for c in ORBIT_COLOURS {
        let nearest = scale
            .iter()
            .map(|&s| delta_e(oklab(c), oklab(s)))
            .fold(f64::INFINITY, f64::min);
        assert!(
            nearest >= 0.12,
            "{} is ΔE {nearest} from a level colour",
            c.hex()
        );
        let l = oklab(c)[0];
        assert!(l <= 0.72, "{} (L = {l}) is faint on white", c.hex());
    }
    // The selection ring differs from every orbit colour and level colour.
    let sel = oklab(scene::SELECTION_COLOUR);
    for c in ORBIT_COLOURS.iter().chain(&scale) {
        assert!(delta_e(sel, oklab(*c)) >= 0.15, "selection vs {}", c.hex());
    }
}

#[test]
fn no_orbit_colour_looks_like_the_dark_low_end_of_the_scale() {
    // A thin dark curve in the lowest quarter of the energy scale (the wine
    // end) reads as a level curve: every orbit colour keeps a difference
    // read at a glance (OKLab ΔE 0.2, twice the level-colour margin above;
    // common practice) from that quarter, and 0.15 in simulated protan vision.
    let low: Vec<Rgb> = (0..=25).map(|i| energy_colour(i as f64 / 100.0)).collect();
    for c in ORBIT_COLOURS {
        let normal = low
            .iter()
            .map(|&s| delta_e(oklab(c), oklab(s)))
            .fold(f64::INFINITY, f64::min);
        assert!(normal >= 0.2, "{} is ΔE {normal} from the low end", c.hex());
        let protan = low
            .iter()
            .map(|&s| delta_e(dichromat(c, PROTAN), dichromat(s, PROTAN)))
            .fold(f64::INFINITY, f64::min);
        assert!(
            protan >= 0.15,
            "{} is ΔE {protan} from the low end (protan)",
            c.hex()
        );
    }
    // and orbits are drawn well wider than level curves
    assert!(scene::ORBIT_WIDTH >= 2.0 * scene::LEVEL_WIDTH);
}
