//! Level curves of H: sample the window on a grid, then marching squares with
//! ambiguous cells resolved, segments joined into polylines.
//!
//! # Marching squares
//!
//! Each grid cell is classified by which of its four corners lie at or above
//! the level; the level crosses an edge whose two ends are on opposite sides,
//! at the point found by linear interpolation. A cell whose diagonal corners
//! agree but differ from the other diagonal (a saddle cell) is resolved by the
//! asymptotic decider: the value of the bilinear interpolant at its own saddle
//! point, `(v0·v2 − v1·v3)/(v0 + v2 − v1 − v3)`, says which diagonal is joined,
//! so the curves agree with the bilinear surface and never cross.
//! Segments are joined into polylines by walking from cell to cell across the
//! shared edge, so no lookup structure is needed. Cells with a NaN corner are
//! blank: curves stop at them. Only cells whose value range contains a level
//! are visited (levels sorted, binary search per cell).
//!
//! Reference: W. E. Lorensen and H. E. Cline, "Marching cubes", SIGGRAPH 1987
//! (the cell method); G. M. Nielson and B. Hamann, "The asymptotic decider:
//! resolving the ambiguity in marching cubes", IEEE Visualization 1991.

use super::system::System;
use super::window::Window;

/// Largest number of grid points per side that [`sample_grid`] accepts; larger
/// requests are clamped (4096² samples are 128 MiB).
pub const MAX_GRID_SIDE: usize = 4096;

/// Newton iterations per vertex in [`refine_curve`].
const REFINE_ITERATIONS: usize = 4;

/// A Newton correction smaller than this fraction of the local spacing of
/// the curve's vertices ends the refinement of a vertex.
const REFINE_STEP_REL: f64 = 1e-12;

/// H sampled on an nq × np lattice over a window (row-major: index = j*nq + i,
/// q_i = qmin + i·dq, p_j = pmin + j·dp). Non-finite samples are NaN.
#[derive(Clone, Debug)]
pub struct Grid {
    pub window: Window,
    pub nq: usize,
    pub np: usize,
    pub values: Vec<f64>,
    /// Fraction of samples where H is NaN or infinite.
    pub nonfinite_fraction: f64,
    /// Smallest and largest finite sample (None if none is finite).
    pub range: Option<(f64, f64)>,
}

impl Grid {
    /// Spacing in q between neighbouring samples.
    pub fn dq(&self) -> f64 {
        self.window.width() / (self.nq.max(2) - 1) as f64
    }

    /// Spacing in p between neighbouring samples.
    pub fn dp(&self) -> f64 {
        self.window.height() / (self.np.max(2) - 1) as f64
    }

    /// q of column i.
    pub fn q(&self, i: usize) -> f64 {
        lattice(self.window.qmin, self.window.qmax, i, self.nq)
    }

    /// p of row j.
    pub fn p(&self, j: usize) -> f64 {
        lattice(self.window.pmin, self.window.pmax, j, self.np)
    }

    /// The sample at column i, row j (NaN when outside the grid or non-finite).
    pub fn value(&self, i: usize, j: usize) -> f64 {
        if i < self.nq && j < self.np {
            self.values
                .get(j * self.nq + i)
                .copied()
                .unwrap_or(f64::NAN)
        } else {
            f64::NAN
        }
    }

    /// The cell (i, j) — between columns i, i+1 and rows j, j+1 — that
    /// contains (q, p), clamped to the grid; None when (q, p) is not finite.
    pub fn cell_of(&self, q: f64, p: f64) -> Option<(usize, usize)> {
        if !q.is_finite() || !p.is_finite() || self.nq < 2 || self.np < 2 {
            return None;
        }
        let fi = ((q - self.window.qmin) / self.dq()).floor();
        let fj = ((p - self.window.pmin) / self.dp()).floor();
        let i = fi.clamp(0.0, (self.nq - 2) as f64) as usize;
        let j = fj.clamp(0.0, (self.np - 2) as f64) as usize;
        Some((i, j))
    }
}

fn lattice(lo: f64, hi: f64, i: usize, n: usize) -> f64 {
    if n < 2 {
        return lo;
    }
    let last = n - 1;
    if i >= last {
        hi
    } else {
        lo + (hi - lo) * (i as f64 / last as f64)
    }
}

/// One continuous level curve.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct LevelCurve {
    pub level: f64,
    /// Vertices as [q, p]. A closed curve ends at its first vertex.
    pub points: Vec<[f64; 2]>,
    pub closed: bool,
    /// The level of a saddle.
    pub is_separatrix: bool,
}

/// A level to draw: its value and whether it is a saddle's level.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Level {
    pub value: f64,
    pub is_separatrix: bool,
}

/// Sample H over the window on nq × np points (each clamped to
/// 2..=[`MAX_GRID_SIDE`]), one batched row evaluation per row of constant p.
pub fn sample_grid(sys: &System, window: &Window, nq: usize, np: usize) -> Grid {
    let nq = nq.clamp(2, MAX_GRID_SIDE);
    let np = np.clamp(2, MAX_GRID_SIDE);
    let program = sys.row_program();
    let qs: Vec<f64> = (0..nq)
        .map(|i| lattice(window.qmin, window.qmax, i, nq))
        .collect();
    let mut values = vec![0.0; nq * np];
    let mut nonfinite = 0usize;
    let mut lo = f64::INFINITY;
    let mut hi = f64::NEG_INFINITY;
    for (j, row) in values.chunks_exact_mut(nq).enumerate() {
        let p = lattice(window.pmin, window.pmax, j, np);
        program.eval_row(&qs, p, row);
        let (bad, row_lo, row_hi) = scan_row(row);
        nonfinite += bad;
        lo = lo.min(row_lo);
        hi = hi.max(row_hi);
    }
    let total = nq * np;
    Grid {
        window: *window,
        nq,
        np,
        values,
        nonfinite_fraction: nonfinite as f64 / total as f64,
        range: (nonfinite < total).then_some((lo, hi)),
    }
}

/// Bisections along a grid edge that confirm a jump in H (each halves the bracket).
const JUMP_BISECTIONS: usize = 10;
/// After the bisections, an edge still rising by more than this fraction of
/// its whole rise holds a pole or a jump rather than a steep stretch.
const JUMP_KEEP_REL: f64 = 0.5;

/// Grid samples set blank by [`blank_jumps`].
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct Jumps {
    /// Samples set to NaN.
    pub samples: usize,
    /// The first edge found, as its midpoint (q, p).
    pub first: Option<(f64, f64)>,
}

/// Blank the grid where H has a pole or a jump between two neighbouring
/// samples (1/q, tan q, a sawtooth): marching squares would otherwise draw
/// level curves straight across it, joining −∞ to +∞.
///
/// An edge is suspect when its rise has the opposite sign to both neighbouring
/// edges' rises in the same row or column and is larger than both together — a
/// zig-zag that a continuous H resolved by the grid cannot make. A suspect is
/// confirmed by bisection on the exact H: the sub-edge across which H keeps
/// crossing the edge's middle value is halved [`JUMP_BISECTIONS`] times; for
/// a continuous H its rise shrinks with it, at a pole or jump it does not
/// (more than [`JUMP_KEEP_REL`] of the whole rise is left, or H is not finite
/// on the way). Both samples of a confirmed edge become NaN, so the cells
/// around it are blank, and the grid's range and non-finite share are updated.
pub fn blank_jumps(sys: &System, grid: &mut Grid) -> Jumps {
    let (nq, np) = (grid.nq, grid.np);
    let mut marked: Vec<usize> = Vec::new();
    let mut first = None;
    let v = &grid.values;
    // (index of the edge's first sample, stride to the next sample, count of samples on the line)
    let mut lines: Vec<(usize, usize, usize)> = (0..np).map(|j| (j * nq, 1, nq)).collect();
    lines.extend((0..nq).map(|i| (i, nq, np)));
    for (start, stride, n) in lines {
        if n < 3 {
            continue;
        }
        let rise = |k: usize| v[start + (k + 1) * stride] - v[start + k * stride];
        for k in 0..n - 1 {
            let d = rise(k);
            if !d.is_finite() || d == 0.0 {
                continue;
            }
            let nbs = [k.checked_sub(1).map(rise), (k + 2 < n).then(|| rise(k + 1))];
            let finite: Vec<f64> = nbs
                .iter()
                .flatten()
                .copied()
                .filter(|x| x.is_finite())
                .collect();
            if finite.is_empty() || finite.iter().any(|&x| x * d >= 0.0) {
                continue;
            }
            let sum: f64 = finite.iter().map(|x| x.abs()).sum();
            let needed = if finite.len() == 2 { sum } else { 2.0 * sum };
            if d.abs() <= needed {
                continue;
            }
            let (a, b) = (start + k * stride, start + (k + 1) * stride);
            let at = |idx: usize| (grid.q(idx % nq), grid.p(idx / nq));
            if edge_jumps(sys, at(a), at(b), v[a], v[b]) {
                marked.push(a);
                marked.push(b);
                if first.is_none() {
                    let ((qa, pa), (qb, pb)) = (at(a), at(b));
                    first = Some((0.5 * (qa + qb), 0.5 * (pa + pb)));
                }
            }
        }
    }
    marked.sort_unstable();
    marked.dedup();
    if marked.is_empty() {
        return Jumps::default();
    }
    for &idx in &marked {
        grid.values[idx] = f64::NAN;
    }
    let (mut lo, mut hi, mut bad) = (f64::INFINITY, f64::NEG_INFINITY, 0usize);
    for &x in &grid.values {
        if x.is_nan() {
            bad += 1;
        } else {
            lo = lo.min(x);
            hi = hi.max(x);
        }
    }
    let total = grid.values.len().max(1);
    grid.nonfinite_fraction = bad as f64 / total as f64;
    grid.range = (bad < grid.values.len()).then_some((lo, hi));
    Jumps {
        samples: marked.len(),
        first,
    }
}

/// Whether H jumps (or has a pole) between the samples at `a` and `b`.
fn edge_jumps(sys: &System, a: (f64, f64), b: (f64, f64), fa: f64, fb: f64) -> bool {
    let whole = (fb - fa).abs();
    let mid_level = 0.5 * (fa + fb);
    let (mut a, mut b, mut fa, mut fb) = (a, b, fa, fb);
    for _ in 0..JUMP_BISECTIONS {
        let m = (0.5 * (a.0 + b.0), 0.5 * (a.1 + b.1));
        let fm = sys.energy(m.0, m.1);
        if !fm.is_finite() {
            return true;
        }
        if (fm - mid_level).signum() == (fa - mid_level).signum() {
            (a, fa) = (m, fm);
        } else {
            (b, fb) = (m, fm);
        }
    }
    (fb - fa).abs() > JUMP_KEEP_REL * whole
}

/// Store infinities as NaN; return the count of non-finite samples and the
/// finite range of the row (lanes of four so the loop vectorises).
fn scan_row(row: &mut [f64]) -> (usize, f64, f64) {
    let mut bad = [0usize; 4];
    let mut lo = [f64::INFINITY; 4];
    let mut hi = [f64::NEG_INFINITY; 4];
    let mut chunks = row.chunks_exact_mut(4);
    for c in &mut chunks {
        for k in 0..4 {
            let v = if c[k].is_infinite() { f64::NAN } else { c[k] };
            c[k] = v;
            bad[k] += v.is_nan() as usize;
            // Comparisons with NaN are false, so NaN never enters the range.
            lo[k] = if v < lo[k] { v } else { lo[k] };
            hi[k] = if v > hi[k] { v } else { hi[k] };
        }
    }
    for v in chunks.into_remainder() {
        if v.is_infinite() {
            *v = f64::NAN;
        }
        bad[0] += v.is_nan() as usize;
        lo[0] = if *v < lo[0] { *v } else { lo[0] };
        hi[0] = if *v > hi[0] { *v } else { hi[0] };
    }
    let fold = |a: [f64; 4], f: fn(f64, f64) -> f64| f(f(a[0], a[1]), f(a[2], a[3]));
    (bad.iter().sum(), fold(lo, f64::min), fold(hi, f64::max))
}

/// `n` levels evenly spaced strictly inside the grid's range: the range cut
/// into n + 1 equal parts. Empty when the range is empty or a single value.
pub fn even_levels(grid: &Grid, n: usize) -> Vec<f64> {
    match grid.range {
        Some((lo, hi)) if hi > lo && n > 0 => {
            let step = (hi - lo) / (n + 1) as f64;
            (1..=n).map(|k| lo + step * k as f64).collect()
        }
        _ => Vec::new(),
    }
}

/// All level curves of the grid at the given levels, in increasing level.
/// Levels that are not finite are skipped; equal levels are traced once
/// (a separatrix if any of them is).
pub fn level_curves(grid: &Grid, levels: &[Level]) -> Vec<LevelCurve> {
    let mut sorted: Vec<Level> = levels
        .iter()
        .copied()
        .filter(|l| l.value.is_finite())
        .collect();
    sorted.sort_by(|a, b| a.value.total_cmp(&b.value));
    sorted.dedup_by(|later, kept| {
        if later.value == kept.value {
            kept.is_separatrix |= later.is_separatrix;
            true
        } else {
            false
        }
    });
    if sorted.is_empty() || grid.nq < 2 || grid.np < 2 || grid.values.len() < grid.nq * grid.np {
        return Vec::new();
    }
    let values: Vec<f64> = sorted.iter().map(|l| l.value).collect();
    let buckets = Buckets::build(grid, &values);
    let mut tracer = Tracer::new(grid);
    let mut curves = Vec::new();
    for (k, level) in sorted.iter().enumerate() {
        tracer.trace_level(
            level.value,
            level.is_separatrix,
            buckets.cells(k),
            &mut curves,
        );
    }
    curves
}

/// Band of a vertex where H is NaN.
const BLANK: u32 = u32::MAX;

/// For each level, the cells whose value range contains it (compressed rows).
struct Buckets {
    start: Vec<usize>,
    cells: Vec<u32>,
}

impl Buckets {
    /// Each vertex gets its band, the number of levels at or below its value
    /// (NaN: `BLANK`); a cell contains level k exactly when its smallest corner
    /// band ≤ k < its largest, so the per-cell test is integer only.
    fn build(grid: &Grid, levels: &[f64]) -> Buckets {
        let (nq, np) = (grid.nq, grid.np);
        let cq = nq - 1;
        // Sentinels at both ends keep the band steps inside the array.
        let mut padded = Vec::with_capacity(levels.len() + 2);
        padded.push(f64::NEG_INFINITY);
        padded.extend_from_slice(levels);
        padded.push(f64::INFINITY);
        let mut last = 1usize;
        let mut band_row = |row: &[f64], out: &mut [u32]| {
            for (b, &v) in out.iter_mut().zip(row) {
                if v.is_nan() {
                    *b = BLANK;
                    continue;
                }
                // Neighbouring samples share a band or sit in the next one: step from
                // the last band instead of searching (padded[last − 1] ≤ v < padded[last]).
                while last <= levels.len() && padded[last] <= v {
                    last += 1;
                }
                while last > 1 && padded[last - 1] > v {
                    last -= 1;
                }
                *b = (last - 1) as u32;
            }
        };
        // Cells that contain at least one level, with their level index range.
        let mut crossed: Vec<(u32, u32, u32)> = Vec::new();
        let mut start = vec![0usize; levels.len() + 1];
        let (mut lo_row, mut hi_row) = (vec![0u32; cq], vec![0u32; cq]);
        let (mut r0, mut r1) = (vec![0u32; nq], vec![0u32; nq]);
        band_row(&grid.values[..nq], &mut r0);
        for j in 0..np - 1 {
            band_row(&grid.values[(j + 1) * nq..(j + 2) * nq], &mut r1);
            let corners = r0.iter().zip(&r0[1..]).zip(r1.iter().zip(&r1[1..]));
            for ((lo, hi), ((a, b), (c, d))) in
                lo_row.iter_mut().zip(hi_row.iter_mut()).zip(corners)
            {
                *lo = (*a).min(*b).min(*c).min(*d);
                *hi = (*a).max(*b).max(*c).max(*d);
            }
            for (i, (&lo, &hi)) in lo_row.iter().zip(&hi_row).enumerate() {
                if lo < hi && hi != BLANK {
                    crossed.push(((j * cq + i) as u32, lo, hi));
                    for n in &mut start[lo as usize + 1..hi as usize + 1] {
                        *n += 1;
                    }
                }
            }
            std::mem::swap(&mut r0, &mut r1);
        }
        for k in 1..start.len() {
            start[k] += start[k - 1];
        }
        let mut fill = start.clone();
        let mut cells = vec![0u32; start[levels.len()]];
        for &(c, lo, hi) in &crossed {
            for f in &mut fill[lo as usize..hi as usize] {
                cells[*f] = c;
                *f += 1;
            }
        }
        Buckets { start, cells }
    }

    fn cells(&self, k: usize) -> &[u32] {
        &self.cells[self.start[k]..self.start[k + 1]]
    }
}

/// Walks level curves through the cells of one grid; `seen` holds, per cell,
/// one bit per edge whose crossing has been used (cleared after each level).
struct Tracer<'a> {
    grid: &'a Grid,
    cq: usize,
    cp: usize,
    dq: f64,
    dp: f64,
    seen: Vec<u8>,
}

/// Edges of a cell: 0 bottom (v0–v1), 1 right (v1–v2), 2 top (v3–v2), 3 left (v0–v3),
/// with corners v0 = (i, j), v1 = (i+1, j), v2 = (i+1, j+1), v3 = (i, j+1).
const OPPOSITE: [u8; 4] = [2, 3, 0, 1];

/// A cell by index and by column and row.
#[derive(Clone, Copy)]
struct At {
    c: usize,
    i: usize,
    j: usize,
}

/// The corner values of one cell, less the level.
#[derive(Clone, Copy)]
struct Cell {
    w: [f64; 4],
}

impl Cell {
    fn code(&self) -> u8 {
        let mut c = 0;
        for (k, w) in self.w.iter().enumerate() {
            if *w >= 0.0 {
                c |= 1 << k;
            }
        }
        c
    }

    /// The edge through which the level leaves the cell after entering through `entry`.
    fn exit(&self, entry: u8) -> Option<u8> {
        let code = self.code();
        let crossed = |e: u8| -> bool {
            let (a, b) = match e {
                0 => (0, 1),
                1 => (1, 2),
                2 => (3, 2),
                _ => (0, 3),
            };
            (code >> a) & 1 != (code >> b) & 1
        };
        if !crossed(entry) {
            return None;
        }
        if code == 5 || code == 10 {
            // Saddle cell: decide by the bilinear saddle value.
            let [w0, w1, w2, w3] = self.w;
            let saddle = (w0 * w2 - w1 * w3) / (w0 + w2 - w1 - w3);
            let diag02_joined = (saddle >= 0.0) == (w0 >= 0.0);
            let pairs: [u8; 4] = if diag02_joined {
                [1, 0, 3, 2]
            } else {
                [3, 2, 1, 0]
            };
            return Some(pairs[entry as usize]);
        }
        (0..4).find(|&e| e != entry && crossed(e))
    }
}

impl<'a> Tracer<'a> {
    fn new(grid: &'a Grid) -> Tracer<'a> {
        let cq = grid.nq - 1;
        let cp = grid.np - 1;
        Tracer {
            grid,
            cq,
            cp,
            dq: grid.dq(),
            dp: grid.dp(),
            seen: vec![0; cq * cp],
        }
    }

    fn at(&self, c: usize) -> At {
        At {
            c,
            i: c % self.cq,
            j: c / self.cq,
        }
    }

    fn cell(&self, at: At, level: f64) -> Option<Cell> {
        let At { i, j, .. } = at;
        let nq = self.grid.nq;
        let v = &self.grid.values;
        let b = j * nq + i;
        let w = [
            v[b] - level,
            v[b + 1] - level,
            v[b + nq + 1] - level,
            v[b + nq] - level,
        ];
        if w.iter().any(|x| x.is_nan()) {
            None
        } else {
            Some(Cell { w })
        }
    }

    /// The cell across edge `e` of cell c, if inside the grid.
    fn neighbour(&self, at: At, e: u8) -> Option<At> {
        let At { c, i, j } = at;
        match e {
            0 if j > 0 => Some(At {
                c: c - self.cq,
                i,
                j: j - 1,
            }),
            1 if i + 1 < self.cq => Some(At {
                c: c + 1,
                i: i + 1,
                j,
            }),
            2 if j + 1 < self.cp => Some(At {
                c: c + self.cq,
                i,
                j: j + 1,
            }),
            3 if i > 0 => Some(At {
                c: c - 1,
                i: i - 1,
                j,
            }),
            _ => None,
        }
    }

    /// Where the level crosses edge e of cell c. Computed from the edge's two
    /// grid vertices in a fixed order, so both cells sharing the edge agree.
    fn point(&self, at: At, cell: &Cell, e: u8) -> [f64; 2] {
        let At { i, j, .. } = at;
        let (k0, k1, di0, dj0, di1, dj1) = match e {
            0 => (0, 1, 0, 0, 1, 0),
            1 => (1, 2, 1, 0, 1, 1),
            2 => (3, 2, 0, 1, 1, 1),
            _ => (0, 3, 0, 0, 0, 1),
        };
        let (a, b) = (cell.w[k0], cell.w[k1]);
        let t = (a / (a - b)).clamp(0.0, 1.0);
        let (i0, j0) = ((i + di0) as f64, (j + dj0) as f64);
        let (i1, j1) = ((i + di1) as f64, (j + dj1) as f64);
        let w = &self.grid.window;
        [
            w.qmin + (i0 + t * (i1 - i0)) * self.dq,
            w.pmin + (j0 + t * (j1 - j0)) * self.dp,
        ]
    }

    fn mark(&mut self, c: usize, e: u8) {
        self.seen[c] |= 1 << e;
    }

    fn is_seen(&self, c: usize, e: u8) -> bool {
        self.seen[c] & (1 << e) != 0
    }

    /// Walk from cell c leaving through edge `exit`, appending crossings to
    /// `pts`. Returns true when the walk came back to an edge already used
    /// (the curve closed).
    fn walk(&mut self, mut c: At, mut exit: u8, level: f64, pts: &mut Vec<[f64; 2]>) -> bool {
        loop {
            let Some(n) = self.neighbour(c, exit) else {
                return false;
            };
            let entry = OPPOSITE[exit as usize];
            if self.is_seen(n.c, entry) {
                return true;
            }
            let Some(cell) = self.cell(n, level) else {
                return false;
            };
            let Some(next) = cell.exit(entry) else {
                return false;
            };
            self.mark(n.c, entry);
            self.mark(n.c, next);
            push_point(pts, self.point(n, &cell, next));
            c = n;
            exit = next;
        }
    }

    fn trace_level(&mut self, level: f64, sep: bool, cells: &[u32], out: &mut Vec<LevelCurve>) {
        for &c in cells {
            let c = self.at(c as usize);
            let Some(cell) = self.cell(c, level) else {
                continue;
            };
            for entry in 0..4u8 {
                if self.is_seen(c.c, entry) {
                    continue;
                }
                let Some(exit) = cell.exit(entry) else {
                    continue;
                };
                self.mark(c.c, entry);
                self.mark(c.c, exit);
                let mut pts = vec![self.point(c, &cell, entry)];
                push_point(&mut pts, self.point(c, &cell, exit));
                let closed = self.walk(c, exit, level, &mut pts);
                if closed {
                    if let (Some(first), Some(last)) = (pts.first().copied(), pts.last().copied())
                        && first != last
                    {
                        pts.push(first);
                    }
                } else {
                    let mut back = Vec::new();
                    self.walk(c, entry, level, &mut back);
                    if !back.is_empty() {
                        back.reverse();
                        back.extend_from_slice(&pts);
                        pts = back;
                    }
                }
                if pts.len() >= 2 {
                    out.push(LevelCurve {
                        level,
                        points: pts,
                        closed,
                        is_separatrix: sep,
                    });
                }
            }
        }
        for &c in cells {
            self.seen[c as usize] = 0;
        }
    }
}

fn push_point(pts: &mut Vec<[f64; 2]>, p: [f64; 2]) {
    if pts.last() != Some(&p) {
        pts.push(p);
    }
}

/// Move each vertex onto the exact level with Newton steps along ∇H (the
/// gradient from the formula's jet). A step is kept only when it lowers
/// |H − level| and is no longer than the spacing of the neighbouring
/// vertices; vertices where H or ∇H is not finite stay where they are.
pub fn refine_curve(sys: &System, curve: &mut LevelCurve) {
    let level = curve.level;
    let n = curve.points.len();
    if n < 2 {
        return;
    }
    let original = curve.points.clone();
    let dist = |a: [f64; 2], b: [f64; 2]| (a[0] - b[0]).hypot(a[1] - b[1]);
    for k in 0..n {
        let x0 = original[k];
        let prev = if k > 0 {
            dist(x0, original[k - 1])
        } else {
            0.0
        };
        let next = if k + 1 < n {
            dist(x0, original[k + 1])
        } else {
            0.0
        };
        let limit = prev.max(next);
        if limit <= 0.0 || limit.is_nan() {
            continue;
        }
        let mut x = x0;
        let mut jet = sys.jet(x[0], x[1]);
        for _ in 0..REFINE_ITERATIONS {
            let r = jet.h - level;
            let g2 = jet.hq * jet.hq + jet.hp * jet.hp;
            if !r.is_finite() || !g2.is_finite() || g2 <= 0.0 {
                break;
            }
            let step = [-r * jet.hq / g2, -r * jet.hp / g2];
            let len = step[0].hypot(step[1]);
            let cand = [x[0] + step[0], x[1] + step[1]];
            if dist(cand, x0) > limit {
                break;
            }
            let cj = sys.jet(cand[0], cand[1]);
            let better = (cj.h - level).abs() < r.abs();
            if !better {
                break;
            }
            x = cand;
            jet = cj;
            if len <= REFINE_STEP_REL * limit {
                break;
            }
        }
        curve.points[k] = x;
    }
    if curve.closed && n > 2 {
        curve.points[n - 1] = curve.points[0];
    }
}
