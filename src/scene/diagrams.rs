//! The figures of the free system's parameter studies: the sweep's
//! bifurcation diagram, the backbone of one well, and the fold curves.

use super::*;

impl Scene {
    /// The bifurcation diagram of a sweep: q of the equilibria against the
    /// swept parameter, center branches solid, saddle branches dashed, each
    /// bifurcation point marked and labelled with its kind and parameter value
    /// (`saddle-node mu = 0.25650`), and a vertical guide at `current` (the
    /// parameter's present value) when it lies in the range.
    pub fn diagram(sys: &System, sweep: &Sweep, current: Option<f64>) -> Scene {
        let name = sweep.param.as_str();
        let x = range_axis(name, sweep.from, sweep.to);
        let qs = sweep
            .branches
            .iter()
            .flat_map(|b| b.points.iter().map(|pt| pt.q))
            .chain(sweep.bifurcations.iter().map(|b| b.q));
        let y = fitted_axis("q", qs, (-1.0, 1.0));
        let mut curves = Vec::with_capacity(sweep.branches.len() + 1);
        for b in &sweep.branches {
            let (colour, dashed) = branch_style(b.kind);
            curves.push(Curve {
                role: CurveRole::Branch { kind: b.kind },
                points: b.points.iter().map(|pt| [pt.param, pt.q]).collect(),
                closed: false,
                colour,
                width: BRANCH_WIDTH,
                dashed,
                arrows: Vec::new(),
            });
        }
        let marks: Vec<Mark> = sweep
            .bifurcations
            .iter()
            .map(|b| Mark {
                at: [b.param, b.q],
                role: MarkRole::Bifurcation,
                style: BIFURCATION_MARKER,
                label: Some(format!(
                    "{} {name} = {}",
                    b.kind.name(),
                    numbers::label(b.param)
                )),
            })
            .collect();
        let mut legend = Vec::new();
        for kind in [
            EquilibriumKind::Center,
            EquilibriumKind::Saddle,
            EquilibriumKind::Degenerate,
        ] {
            if sweep.branches.iter().any(|b| b.kind == kind) {
                let (colour, dashed) = branch_style(kind);
                legend.push(line_entry(
                    format!("{} branch", kind_name(kind)),
                    colour,
                    BRANCH_WIDTH,
                    dashed,
                ));
            }
        }
        if !marks.is_empty() {
            legend.push(LegendEntry {
                label: "bifurcation".to_string(),
                swatch: Swatch::Marker(BIFURCATION_MARKER),
            });
        }
        if let Some(v) = current.filter(|v| *v >= x.min && *v <= x.max) {
            curves.push(guide(vec![[v, y.min], [v, y.max]]));
            legend.push(line_entry(
                format!("{name} = {}", numbers::caption(v)),
                GUIDE_COLOUR,
                GUIDE_WIDTH,
                true,
            ));
        }
        let tail = format!(
            "{name} from {} to {}",
            numbers::caption(sweep.from),
            numbers::caption(sweep.to)
        );
        Scene {
            title: format!("Sweep: equilibria as {name} moves"),
            caption: caption_without(sys, &[name], &tail),
            x,
            y,
            curves,
            marks,
            clouds: Vec::new(),
            colour_scale: None,
            legend,
            rasters: Vec::new(),
        }
    }

    /// The backbone of one well: period against energy (with the escape
    /// energy as a vertical guide) or frequency against amplitude.
    pub fn backbone(sys: &System, backbone: &Backbone, plot: BackbonePlot) -> Scene {
        let rows = &backbone.rows;
        let finite = |a: f64, b: f64| a.is_finite() && b.is_finite();
        let (points, x, y, title): (Vec<[f64; 2]>, Axis, Axis, &str) = match plot {
            BackbonePlot::PeriodEnergy => {
                let points: Vec<[f64; 2]> = rows
                    .iter()
                    .filter(|r| finite(r.energy, r.period))
                    .map(|r| [r.energy, r.period])
                    .collect();
                let energies = points
                    .iter()
                    .map(|p| p[0])
                    .chain([backbone.center_energy])
                    .chain(backbone.escape_energy);
                let x = fitted_axis("energy E", energies, (0.0, 1.0));
                let y = fitted_axis("period T", points.iter().map(|p| p[1]), (0.0, 1.0));
                (points, x, y, "Period against energy")
            }
            BackbonePlot::FrequencyAmplitude => {
                let points: Vec<[f64; 2]> = rows
                    .iter()
                    .filter(|r| finite(r.amplitude, r.frequency))
                    .map(|r| [r.amplitude, r.frequency])
                    .collect();
                let x = fitted_axis("amplitude", points.iter().map(|p| p[0]), (0.0, 1.0));
                let y = fitted_axis("frequency \u{3c9}", points.iter().map(|p| p[1]), (0.0, 1.0));
                (points, x, y, "Frequency against amplitude")
            }
        };
        let mut curves = Vec::new();
        let mut legend = vec![
            line_entry(
                "backbone".to_string(),
                BACKBONE_COLOUR,
                BACKBONE_WIDTH,
                false,
            ),
            LegendEntry {
                label: "computed orbit".to_string(),
                swatch: Swatch::Marker(SAMPLE_MARKER),
            },
        ];
        // each computed orbit marked where it is, so the sampling shows
        let marks = points
            .iter()
            .map(|&at| Mark {
                at,
                role: MarkRole::Sample,
                style: SAMPLE_MARKER,
                label: None,
            })
            .collect();
        curves.push(Curve {
            role: CurveRole::Backbone,
            points,
            closed: false,
            colour: BACKBONE_COLOUR,
            width: BACKBONE_WIDTH,
            dashed: false,
            arrows: Vec::new(),
        });
        if plot == BackbonePlot::PeriodEnergy
            && let Some(e) = backbone.escape_energy.filter(|e| e.is_finite())
        {
            curves.push(guide(vec![[e, y.min], [e, y.max]]));
            legend.push(escape_entry());
        }
        // the well's size is the scale against which the center's
        // coordinates are rounding noise
        let size = backbone.rows.iter().fold(0.0f64, |m, r| m.max(r.amplitude));
        let mut tail = format!(
            "well of the center at q = {}, p = {}",
            numbers::caption(numbers::clean(backbone.center[0], size)),
            numbers::caption(numbers::clean(backbone.center[1], size))
        );
        if let Some(shift) = &backbone.frequency_shift {
            tail.push_str("; ");
            tail.push_str(&shift_text(shift));
        }
        Scene {
            title: title.to_string(),
            caption: caption_without(sys, &[], &tail),
            x,
            y,
            curves,
            marks,
            clouds: Vec::new(),
            colour_scale: None,
            legend,
            rasters: Vec::new(),
        }
    }

    /// The fold curves (where saddle-nodes happen) in the plane of two parameters over their box,
    /// cusps marked and labelled, and cross-hair guides at `current` (the two
    /// parameters' present values) when it lies in the box.
    pub fn folds(sys: &System, folds: &FoldCurves, current: Option<[f64; 2]>) -> Scene {
        let [n1, n2] = [folds.params[0].as_str(), folds.params[1].as_str()];
        let [a1, b1, a2, b2] = folds.bounds;
        let x = range_axis(n1, a1, b1);
        let y = range_axis(n2, a2, b2);
        let mut curves: Vec<Curve> = folds
            .curves
            .iter()
            .map(|c| Curve {
                role: CurveRole::Fold,
                points: c.points.iter().map(|pt| pt.params).collect(),
                closed: c.closed,
                colour: FOLD_COLOUR,
                width: FOLD_WIDTH,
                dashed: false,
                arrows: Vec::new(),
            })
            .collect();
        let marks: Vec<Mark> = folds
            .cusps
            .iter()
            .map(|c| Mark {
                at: c.params,
                role: MarkRole::Cusp,
                style: BIFURCATION_MARKER,
                label: Some(format!(
                    "cusp {n1} = {}, {n2} = {}",
                    numbers::label(c.params[0]),
                    numbers::label(c.params[1])
                )),
            })
            .collect();
        let mut legend = Vec::new();
        if !curves.is_empty() {
            legend.push(line_entry(
                "fold curve".to_string(),
                FOLD_COLOUR,
                FOLD_WIDTH,
                false,
            ));
        }
        if !marks.is_empty() {
            legend.push(LegendEntry {
                label: "cusp".to_string(),
                swatch: Swatch::Marker(BIFURCATION_MARKER),
            });
        }
        if let Some([u, v]) = current
            && u >= x.min
            && u <= x.max
            && v >= y.min
            && v <= y.max
        {
            curves.push(guide(vec![[u, y.min], [u, y.max]]));
            curves.push(guide(vec![[x.min, v], [x.max, v]]));
            legend.push(line_entry(
                format!(
                    "{n1} = {}, {n2} = {}",
                    numbers::caption(u),
                    numbers::caption(v)
                ),
                GUIDE_COLOUR,
                GUIDE_WIDTH,
                true,
            ));
        }
        Scene {
            title: format!("Fold curves in ({n1}, {n2})"),
            caption: caption_without(sys, &[n1, n2], ""),
            x,
            y,
            curves,
            marks,
            clouds: Vec::new(),
            colour_scale: None,
            legend,
            rasters: Vec::new(),
        }
    }
}
