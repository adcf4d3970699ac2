//! Globally adaptive Gauss–Kronrod (7, 15) quadrature with QUADPACK's
//! error estimate, for the integrals over a level curve (R. Piessens et al.,
//! *QUADPACK*, Springer 1983, §2; W. H. Press et al., *Numerical Recipes*,
//! 3rd ed., 2007, §4.6).

/// Gauss–Kronrod (7, 15) nodes on [−1, 1] (the positive half, centre first) and weights.
const GK_NODES: [f64; 8] = [
    0.0,
    0.207_784_955_007_898_5,
    0.405_845_151_377_397_2,
    0.586_087_235_467_691_1,
    0.741_531_185_599_394_4,
    0.864_864_423_359_769_1,
    0.949_107_912_342_758_5,
    0.991_455_371_120_813,
];
const GK_KRONROD: [f64; 8] = [
    0.209_482_141_084_727_8,
    0.204_432_940_075_298_9,
    0.190_350_578_064_785_4,
    0.169_004_726_639_267_9,
    0.140_653_259_715_525_9,
    0.104_790_010_322_250_2,
    0.063_092_092_629_978_55,
    0.022_935_322_010_529_22,
];
/// Gauss weights of the 7-point rule, on nodes 0, 2, 4, 6 of GK_NODES.
const GK_GAUSS: [f64; 4] = [
    0.417_959_183_673_469_4,
    0.381_830_050_505_118_9,
    0.279_705_391_489_276_7,
    0.129_484_966_168_869_7,
];

/// Most subintervals of the adaptive quadrature.
const GK_MAX_INTERVALS: usize = 2_000;
/// The error of a rule is never taken below this many ulps of Σ|w f|.
const GK_ROUNDOFF: f64 = 50.0;

/// One interval of the adaptive quadrature: its rule's estimate and error.
struct Piece {
    lo: f64,
    hi: f64,
    val: [f64; 2],
    err: [f64; 2],
    /// Both errors are at the roundoff floor: bisecting cannot lower them.
    floor: bool,
}

/// The (7, 15) Gauss–Kronrod rule on [lo, hi] for both components: the
/// Kronrod estimate and its error, taken as QUADPACK's qk15 does:
/// ε = I_|f−mean| · min(1, (200 |K − G| / I_|f−mean|)^1.5), at least 50 ulps of
/// ∫|f| (the Kronrod value is far more accurate than its difference from the
/// Gauss value).
fn gk_rule(f: &dyn Fn(f64) -> [f64; 2], lo: f64, hi: f64) -> Piece {
    let c = 0.5 * (lo + hi);
    let h = 0.5 * (hi - lo);
    let mut vals = [[0.0; 2]; 15];
    vals[0] = f(c);
    for (i, &x) in GK_NODES.iter().enumerate().skip(1) {
        vals[2 * i - 1] = f(c - h * x);
        vals[2 * i] = f(c + h * x);
    }
    // Value n was taken at node ⌈n/2⌉ of GK_NODES.
    let weight = |n: usize| n.div_ceil(2);
    let mut val = [0.0; 2];
    let mut err = [0.0; 2];
    let mut floor = true;
    for comp in 0..2 {
        let (mut k, mut g, mut abs) = (0.0, 0.0, 0.0);
        for (n, v) in vals.iter().enumerate() {
            let i = weight(n);
            k += GK_KRONROD[i] * v[comp];
            abs += GK_KRONROD[i] * v[comp].abs();
            if i % 2 == 0 {
                g += GK_GAUSS[i / 2] * v[comp];
            }
        }
        let mean = 0.5 * k;
        let asc: f64 = vals
            .iter()
            .enumerate()
            .map(|(n, v)| GK_KRONROD[weight(n)] * (v[comp] - mean).abs())
            .sum();
        let h = h.abs();
        let (diff, asc, abs) = ((k - g).abs() * h, asc * h, abs * h);
        let mut e = diff;
        if asc > 0.0 && diff > 0.0 {
            e = asc * (200.0 * diff / asc).powf(1.5).min(1.0);
        }
        let least = GK_ROUNDOFF * f64::EPSILON * abs;
        floor &= e <= least;
        val[comp] = k * h;
        err[comp] = e.max(least);
    }
    Piece {
        lo,
        hi,
        val,
        err,
        floor,
    }
}

/// Globally adaptive Gauss–Kronrod (7, 15) of a two-component integrand over
/// [a, b] to relative tolerance `tol` on each component: the interval with
/// the largest error is bisected until the errors add up to less than `tol`
/// of the integral (an interval too short to bisect, or at the roundoff
/// floor, is left as it is). Piessens et al., *QUADPACK* (Springer 1983) §2.
pub(super) fn gauss_kronrod(
    f: &dyn Fn(f64) -> [f64; 2],
    a: f64,
    b: f64,
    tol: f64,
) -> Option<[f64; 2]> {
    let first = gk_rule(f, a, b);
    let mut pieces = Vec::new();
    // Pieces that can no longer be refined.
    let mut settled: Vec<Piece> = Vec::new();
    if first.floor {
        settled.push(first);
    } else {
        pieces.push(first);
    }
    loop {
        let mut val = [0.0; 2];
        let mut err = [0.0; 2];
        for p in pieces.iter().chain(&settled) {
            for c in 0..2 {
                val[c] += p.val[c];
                err[c] += p.err[c];
            }
        }
        if !(val[0].is_finite() && val[1].is_finite()) {
            return None;
        }
        let bound = [tol * val[0].abs(), tol * val[1].abs()];
        if (err[0] <= bound[0] && err[1] <= bound[1]) || pieces.is_empty() {
            return Some(val);
        }
        if pieces.len() + settled.len() >= GK_MAX_INTERVALS {
            return None;
        }
        // The piece contributing most to the component furthest from its bound.
        let worst = (0..2)
            .max_by(|&x, &y| (err[x] / bound[x]).total_cmp(&(err[y] / bound[y])))
            .unwrap_or(0);
        let (k, _) = pieces
            .iter()
            .enumerate()
            .max_by(|x, y| x.1.err[worst].total_cmp(&y.1.err[worst]))?;
        let p = pieces.swap_remove(k);
        let m = 0.5 * (p.lo + p.hi);
        if m <= p.lo || m >= p.hi {
            settled.push(p);
            continue;
        }
        for half in [gk_rule(f, p.lo, m), gk_rule(f, m, p.hi)] {
            if half.floor {
                settled.push(half);
            } else {
                pieces.push(half);
            }
        }
    }
}
