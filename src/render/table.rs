//! Tables of results as CSV and JSON: equilibria, wells and the other lists
//! the core produces. One `Table` type, one CSV writer, one JSON writer; the
//! builders below only choose columns. Numbers keep full precision (the
//! shortest text that reads back as the same f64); a missing value is an
//! empty CSV field and a JSON null.

use crate::core::backbone::Backbone;
use crate::core::basin::{Basin, Erosion};
use crate::core::continuation::Sweep;
use crate::core::equilibria::{DegenerateShape, Equilibrium};
use crate::core::folds::FoldCurves;
use crate::core::melnikov::Melnikov;
use crate::core::orbit::Orbit;
use crate::core::section::Section;
use crate::core::wells::ConnectionKind;
use crate::core::wells::Well;
use crate::core::window::Window;
use crate::numbers;
use crate::request::LevelsResult;
use crate::scene::kind_name;
use serde_json::{Map, Value};

/// One cell.
#[derive(Clone, Debug, PartialEq)]
pub enum Cell {
    Number(f64),
    Integer(i64),
    Text(String),
    Empty,
}

impl From<f64> for Cell {
    fn from(v: f64) -> Self {
        Cell::Number(v)
    }
}

impl From<Option<f64>> for Cell {
    fn from(v: Option<f64>) -> Self {
        v.map_or(Cell::Empty, Cell::Number)
    }
}

impl From<usize> for Cell {
    fn from(v: usize) -> Self {
        i64::try_from(v).map_or(Cell::Empty, Cell::Integer)
    }
}

impl From<Option<usize>> for Cell {
    fn from(v: Option<usize>) -> Self {
        v.map_or(Cell::Empty, Cell::from)
    }
}

impl From<&str> for Cell {
    fn from(v: &str) -> Self {
        Cell::Text(v.to_string())
    }
}

/// A column: the key used in JSON and the CSV header text (name and unit).
#[derive(Clone, Debug, PartialEq)]
pub struct Column {
    pub key: String,
    pub header: String,
}

impl Column {
    pub fn new(key: &str, header: &str) -> Column {
        Column {
            key: key.to_string(),
            header: header.to_string(),
        }
    }

    /// A column whose key is also its header.
    pub fn plain(key: &str) -> Column {
        Column::new(key, key)
    }
}

/// Rows under named columns.
#[derive(Clone, Debug, PartialEq, Default)]
pub struct Table {
    pub columns: Vec<Column>,
    pub rows: Vec<Vec<Cell>>,
}

fn csv_field(text: &str) -> String {
    if text.contains([',', '"', '\n', '\r']) || text.starts_with(' ') || text.ends_with(' ') {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

impl Table {
    pub fn new(columns: Vec<Column>) -> Table {
        Table {
            columns,
            rows: Vec::new(),
        }
    }

    /// Add a row (missing trailing cells are empty, extra cells are dropped).
    pub fn push(&mut self, mut row: Vec<Cell>) {
        row.resize(self.columns.len(), Cell::Empty);
        self.rows.push(row);
    }

    /// CSV: a header row, then one line per row (RFC 4180 quoting).
    pub fn to_csv(&self) -> String {
        let mut out = String::new();
        let header: Vec<String> = self.columns.iter().map(|c| csv_field(&c.header)).collect();
        out.push_str(&header.join(","));
        out.push('\n');
        for row in &self.rows {
            let fields: Vec<String> = row
                .iter()
                .map(|c| match c {
                    Cell::Number(v) => numbers::exact(*v),
                    Cell::Integer(i) => i.to_string(),
                    Cell::Text(t) => csv_field(t),
                    Cell::Empty => String::new(),
                })
                .collect();
            out.push_str(&fields.join(","));
            out.push('\n');
        }
        out
    }

    /// JSON: an array of objects keyed by column key (non-finite numbers become null).
    pub fn to_json_value(&self) -> Value {
        let rows = self
            .rows
            .iter()
            .map(|row| {
                let mut obj = Map::new();
                for (col, cell) in self.columns.iter().zip(row) {
                    let v = match cell {
                        Cell::Number(v) => {
                            serde_json::Number::from_f64(*v).map_or(Value::Null, Value::Number)
                        }
                        Cell::Integer(i) => Value::from(*i),
                        Cell::Text(t) => Value::String(t.clone()),
                        Cell::Empty => Value::Null,
                    };
                    obj.insert(col.key.clone(), v);
                }
                Value::Object(obj)
            })
            .collect();
        Value::Array(rows)
    }

    /// Pretty-printed JSON text of `to_json_value`.
    pub fn to_json(&self) -> String {
        serde_json::to_string_pretty(&self.to_json_value()).unwrap_or_else(|_| "[]".to_string())
    }

    /// Columns for the parameter values, so every row says where it was computed.
    pub fn with_parameters(mut self, params: &[(String, f64)]) -> Table {
        let n = self.columns.len();
        for (name, _) in params {
            self.columns
                .push(Column::new(&format!("param_{name}"), name));
        }
        for row in &mut self.rows {
            row.truncate(n);
            row.extend(params.iter().map(|(_, v)| Cell::Number(*v)));
        }
        self
    }
}

/// The parameters of a system as (name, value) pairs, for table columns.
pub fn parameter_pairs(sys: &crate::core::system::System) -> Vec<(String, f64)> {
    sys.formula()
        .params()
        .iter()
        .cloned()
        .zip(sys.params().iter().copied())
        .collect()
}

fn shape_name(shape: DegenerateShape) -> &'static str {
    match shape {
        DegenerateShape::NonlinearCenter => "nonlinear-center",
        DegenerateShape::NoExtremum => "no-extremum",
    }
}

/// One row per equilibrium: position, energy, kind, eigenvalues, ω and period
/// (centers), λ and directions (saddles), then the parameter values.
pub fn equilibria_table(equilibria: &[Equilibrium], params: &[(String, f64)]) -> Table {
    let mut t = Table::new(vec![
        Column::plain("q"),
        Column::plain("p"),
        Column::new("energy", "E"),
        Column::plain("kind"),
        Column::new("eig1_re", "eigenvalue 1 re [1/time]"),
        Column::new("eig1_im", "eigenvalue 1 im [1/time]"),
        Column::new("eig2_re", "eigenvalue 2 re [1/time]"),
        Column::new("eig2_im", "eigenvalue 2 im [1/time]"),
        Column::new("hessian_det", "det Hessian"),
        Column::new("omega", "omega [rad/time]"),
        Column::new("small_period", "small-oscillation period [time]"),
        Column::new("lambda", "lambda [1/time]"),
        Column::new("stable_dq", "stable direction q"),
        Column::new("stable_dp", "stable direction p"),
        Column::new("unstable_dq", "unstable direction q"),
        Column::new("unstable_dp", "unstable direction p"),
        Column::plain("degenerate"),
    ]);
    for e in equilibria {
        let dir = |d: Option<[f64; 2]>, i: usize| Cell::from(d.map(|v| v[i]));
        t.push(vec![
            e.q.into(),
            e.p.into(),
            e.energy.into(),
            kind_name(e.kind).into(),
            e.eigenvalues[0][0].into(),
            e.eigenvalues[0][1].into(),
            e.eigenvalues[1][0].into(),
            e.eigenvalues[1][1].into(),
            e.hessian_det.into(),
            e.omega.into(),
            e.small_period.into(),
            e.lambda.into(),
            dir(e.stable_dir, 0),
            dir(e.stable_dir, 1),
            dir(e.unstable_dir, 0),
            dir(e.unstable_dir, 1),
            e.degenerate.map_or(Cell::Empty, |s| shape_name(s).into()),
        ]);
    }
    t.with_parameters(params)
}

/// One row per well: its center, energy, escape energy, depth and bounding saddle.
pub fn wells_table(wells: &[Well], params: &[(String, f64)]) -> Table {
    let mut t = Table::new(vec![
        Column::new("center", "center #"),
        Column::plain("q"),
        Column::plain("p"),
        Column::new("energy", "E at center"),
        Column::new("escape_energy", "escape energy E"),
        Column::new("depth", "depth (E)"),
        Column::new("escape_saddle", "escape saddle #"),
    ]);
    for w in wells {
        t.push(vec![
            (w.center + 1).into(),
            w.q.into(),
            w.p.into(),
            w.energy.into(),
            w.escape_energy.into(),
            w.depth.into(),
            w.escape_saddle.map(|s| s + 1).into(),
        ]);
    }
    t.with_parameters(params)
}

/// The columns of orbit samples: t, q, p and the energy E = H(q, p).
fn sample_columns() -> Vec<Column> {
    vec![
        Column::plain("t"),
        Column::plain("q"),
        Column::plain("p"),
        Column::new("energy", "E"),
    ]
}

fn sample_cells(orbit: &Orbit) -> impl Iterator<Item = Vec<Cell>> + '_ {
    orbit
        .samples
        .iter()
        .map(|s| vec![s.t.into(), s.q.into(), s.p.into(), s.h.into()])
}

/// The samples of one orbit: t, q, p, H.
pub fn orbit_samples_table(orbit: &Orbit) -> Table {
    let mut t = Table::new(sample_columns());
    for row in sample_cells(orbit) {
        t.push(row);
    }
    t
}

/// The samples of several orbits, each row tagged with its orbit's index.
pub fn orbits_samples_table(orbits: &[Orbit], params: &[(String, f64)]) -> Table {
    let mut columns = vec![Column::plain("orbit")];
    columns.extend(sample_columns());
    let mut t = Table::new(columns);
    for (i, o) in orbits.iter().enumerate() {
        for row in sample_cells(o) {
            let mut cells = vec![Cell::from(i + 1)];
            cells.extend(row);
            t.push(cells);
        }
    }
    t.with_parameters(params)
}

/// A sweep: one `point` row per equilibrium on each branch (its branch index
/// and kind), then one `bifurcation` row per located point (its kind). The
/// swept parameter's column is headed by its name.
pub fn sweep_table(sweep: &Sweep) -> Table {
    let mut t = Table::new(vec![
        Column::plain("row"),
        Column::plain("branch"),
        Column::new("param", &sweep.param),
        Column::plain("q"),
        Column::plain("p"),
        Column::plain("energy"),
        Column::plain("kind"),
    ]);
    for (i, b) in sweep.branches.iter().enumerate() {
        for pt in &b.points {
            t.push(vec![
                "point".into(),
                (i + 1).into(),
                pt.param.into(),
                pt.q.into(),
                pt.p.into(),
                pt.energy.into(),
                kind_name(pt.kind).into(),
            ]);
        }
    }
    for b in &sweep.bifurcations {
        t.push(vec![
            "bifurcation".into(),
            Cell::Empty,
            b.param.into(),
            b.q.into(),
            b.p.into(),
            b.energy.into(),
            b.kind.name().into(),
        ]);
    }
    t
}

/// Fold curves: one `point` row per saddle-node on each curve (its curve
/// index), then one `cusp` row per cusp; the two parameter columns are headed
/// by their names.
pub fn folds_table(folds: &FoldCurves) -> Table {
    let mut t = Table::new(vec![
        Column::plain("row"),
        Column::plain("curve"),
        Column::new("param1", &folds.params[0]),
        Column::new("param2", &folds.params[1]),
        Column::plain("q"),
        Column::plain("p"),
        Column::plain("energy"),
    ]);
    let row = |record: &str, curve: Cell, pt: &crate::core::folds::FoldPoint| {
        vec![
            record.into(),
            curve,
            pt.params[0].into(),
            pt.params[1].into(),
            pt.q.into(),
            pt.p.into(),
            pt.energy.into(),
        ]
    };
    for (i, c) in folds.curves.iter().enumerate() {
        for pt in &c.points {
            t.push(row("point", (i + 1).into(), pt));
        }
    }
    for pt in &folds.cusps {
        t.push(row("cusp", Cell::Empty, pt));
    }
    t
}

/// A backbone: energy, period, angular frequency, action and amplitude per level.
pub fn backbone_table(backbone: &Backbone) -> Table {
    let mut t = Table::new(vec![
        Column::plain("energy"),
        Column::plain("period"),
        Column::plain("frequency"),
        Column::plain("action"),
        Column::plain("amplitude"),
    ]);
    for r in &backbone.rows {
        t.push(vec![
            r.energy.into(),
            r.period.into(),
            r.frequency.into(),
            r.action.into(),
            r.amplitude.into(),
        ]);
    }
    t
}

/// The Melnikov function's samples: one row per connection and t₀, with
/// m(t₀) (per unit amplitude) and M(t₀) = F·m(t₀) − δ·D at the system's F.
pub fn melnikov_table(m: &Melnikov) -> Table {
    let mut t = Table::new(vec![
        Column::new("connection", "connection"),
        Column::plain("kind"),
        Column::plain("t0"),
        Column::new("m", "m(t0) per unit amplitude"),
        Column::new("M", "M(t0)"),
    ]);
    for (k, c) in m.connections.iter().enumerate() {
        for &[t0, mv] in &c.samples {
            t.push(vec![
                Cell::Integer(k as i64 + 1),
                Cell::Text(connection_kind_name(c.kind).to_string()),
                t0.into(),
                mv.into(),
                (m.amplitude_value * mv - m.damping * c.damping_integral).into(),
            ]);
        }
    }
    t
}

/// One row per level of every well: the well's number and center, n, Eₙ,
/// Eₙ − E₀, the spacing Eₙ₊₁ − Eₙ, the period, and on the n = 0 row the
/// tunnelling splitting when it applies.
pub fn levels_table(result: &LevelsResult) -> Table {
    let mut t = Table::new(vec![
        Column::plain("well"),
        Column::plain("center_q"),
        Column::plain("center_p"),
        Column::plain("n"),
        Column::plain("energy"),
        Column::new("above_lowest", "energy - E0"),
        Column::plain("spacing"),
        Column::plain("period"),
        Column::plain("splitting"),
    ]);
    for (i, w) in result.wells.iter().enumerate() {
        let e0 = w.levels.first().map_or(0.0, |l| l.energy);
        for l in &w.levels {
            let split = (l.n == 0)
                .then(|| w.splitting.map(|s| s.splitting))
                .flatten();
            t.push(vec![
                (i + 1).into(),
                w.center[0].into(),
                w.center[1].into(),
                l.n.into(),
                l.energy.into(),
                (l.energy - e0).into(),
                l.spacing.into(),
                l.period.into(),
                split.into(),
            ]);
        }
    }
    t
}

/// The section's points: one row per start and drive period (k = 0 is the start).
pub fn section_table(s: &Section) -> Table {
    let mut t = Table::new(vec![
        Column::new("orbit", "orbit"),
        Column::new("k", "drive periods"),
        Column::plain("q"),
        Column::plain("p"),
    ]);
    for (i, o) in s.orbits.iter().enumerate() {
        for (k, pt) in std::iter::once(&o.start).chain(&o.points).enumerate() {
            t.push(vec![
                Cell::Integer(i as i64 + 1),
                Cell::Integer(k as i64),
                pt[0].into(),
                pt[1].into(),
            ]);
        }
    }
    t
}

/// A safe basin's mask: one row per lattice start (q fastest, rows of p
/// from the bottom), the well it started in (empty when in none), the drive
/// periods it stayed there and whether it is safe (stayed them all).
pub fn basin_table(b: &Basin) -> Table {
    let mut t = Table::new(vec![
        Column::plain("q"),
        Column::plain("p"),
        Column::new("well", "well"),
        Column::new("stayed", "drive periods stayed"),
        Column::new("safe", "safe (1) or not (0)"),
    ]);
    for c in 0..b.lattice * b.lattice {
        let x = b.cell_centre(c);
        let found = b
            .wells
            .iter()
            .enumerate()
            .find_map(|(k, w)| w.stayed.get(c).copied().flatten().map(|s| (k, s)));
        let (well, stayed, safe) = match found {
            Some((k, s)) => (
                Cell::from(k + 1),
                Cell::from(s as usize),
                Cell::Integer(i64::from(s as usize == b.periods)),
            ),
            None => (Cell::Empty, Cell::Empty, Cell::Integer(0)),
        };
        t.push(vec![x[0].into(), x[1].into(), well, stayed, safe]);
    }
    t
}

/// An erosion curve: one row per amplitude and well.
pub fn erosion_table(e: &Erosion) -> Table {
    let mut t = Table::new(vec![
        Column::plain("amplitude"),
        Column::new("well", "well"),
        Column::new("center_q", "center q"),
        Column::new("center_p", "center p"),
        Column::new("integrity", "global integrity"),
        Column::new("local_integrity", "local integrity"),
        Column::new("safe_area", "safe area"),
        Column::new("reference_area", "undriven area"),
    ]);
    for p in &e.points {
        for (k, c) in e.centers.iter().enumerate() {
            t.push(vec![
                p.amplitude.into(),
                Cell::from(k + 1),
                c[0].into(),
                c[1].into(),
                p.integrity.get(k).copied().into(),
                p.local_integrity.get(k).copied().into(),
                p.safe_area.get(k).copied().into(),
                e.reference_area.get(k).copied().into(),
            ]);
        }
    }
    t
}

/// The name of a connection's kind in tables.
pub fn connection_kind_name(kind: ConnectionKind) -> &'static str {
    match kind {
        ConnectionKind::Homoclinic => "homoclinic",
        ConnectionKind::Heteroclinic => "heteroclinic",
    }
}

/// A core result as JSON with the formula, the parameter values by name and
/// the window added at the top level, so the file says what it was computed from.
pub fn annotated_json<T: serde::Serialize>(
    body: &T,
    formula: &str,
    parameters: &[(String, f64)],
    window: &Window,
) -> String {
    let params: Map<String, Value> = parameters
        .iter()
        .map(|(n, v)| (n.clone(), Value::from(*v)))
        .collect();
    let mut value = serde_json::to_value(body).unwrap_or(Value::Null);
    if let Some(map) = value.as_object_mut() {
        map.insert("formula".into(), formula.into());
        map.insert("parameters".into(), params.into());
        if let Ok(w) = serde_json::to_value(window) {
            map.insert("window".into(), w);
        }
    }
    serde_json::to_string_pretty(&value).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"))
}

/// One row of measurements per orbit: start, energy, period, frequency,
/// action, motion, energy error and how it stopped.
pub fn orbit_measurements_table(orbits: &[Orbit], params: &[(String, f64)]) -> Table {
    let mut t = Table::new(vec![
        Column::plain("q0"),
        Column::plain("p0"),
        Column::new("energy", "E"),
        Column::new("period", "period [time]"),
        Column::new("frequency", "frequency [rad/time]"),
        Column::new("action", "action I [E*time]"),
        Column::new("q_advance", "q advance per period"),
        Column::plain("motion"),
        Column::new("energy_error", "energy error max |H - H0|"),
        Column::new("relative_energy_error", "energy error (relative)"),
        Column::plain("method"),
        Column::new("step", "step [time]"),
        Column::plain("steps"),
        Column::plain("stop"),
    ]);
    for o in orbits {
        let start = o.samples.first();
        let motion = serde_json::to_value(o.motion)
            .ok()
            .and_then(|v| v.as_str().map(str::to_string))
            .unwrap_or_default();
        t.push(vec![
            start.map(|s| s.q).into(),
            start.map(|s| s.p).into(),
            o.energy.into(),
            o.period.into(),
            o.frequency.into(),
            o.action.into(),
            o.q_advance.into(),
            Cell::Text(motion),
            o.energy_error.into(),
            o.relative_energy_error.into(),
            o.method.name().into(),
            o.step.into(),
            i64::try_from(o.steps).map_or(Cell::Empty, Cell::Integer),
            o.stop.name().into(),
        ]);
    }
    t.with_parameters(params)
}

/// Parse CSV text written by `Table::to_csv` back into header and rows of
/// fields (quoted fields unquoted). For checks and for reading our own tables.
pub fn parse_csv(text: &str) -> Vec<Vec<String>> {
    let mut rows = Vec::new();
    let mut row = Vec::new();
    let mut field = String::new();
    let mut quoted = false;
    let mut chars = text.chars().peekable();
    while let Some(c) = chars.next() {
        match (quoted, c) {
            (true, '"') => {
                if chars.peek() == Some(&'"') {
                    field.push('"');
                    chars.next();
                } else {
                    quoted = false;
                }
            }
            (true, c) => field.push(c),
            (false, '"') => quoted = true,
            (false, ',') => row.push(std::mem::take(&mut field)),
            (false, '\n') => {
                row.push(std::mem::take(&mut field));
                rows.push(std::mem::take(&mut row));
            }
            (false, '\r') => {}
            (false, c) => field.push(c),
        }
    }
    if !field.is_empty() || !row.is_empty() {
        row.push(field);
        rows.push(row);
    }
    rows
}
