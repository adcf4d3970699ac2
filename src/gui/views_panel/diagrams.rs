//! The panes of the free system's parameter studies: the sweep (a click
//! sets the parameter), the fold curves in a plane of two parameters, and
//! the backbone of one well (period, frequency and action against energy).

use super::*;

impl ViewsPanel {
    pub(super) fn diagram_ui(
        &mut self,
        ui: &mut egui::Ui,
        inp: &Inputs,
        r: &PaneRequests,
        look: &Look,
        commands: &mut Vec<Command>,
    ) {
        let names = param_names(inp);
        let Some(SweepRequest {
            param: name,
            from,
            to,
            ..
        }) = r.sweep.clone()
        else {
            ui.label("The formula has no parameter to sweep.");
            return;
        };
        // The edit that puts a new swept parameter or range in the session.
        let set_sweep = |param: &str, from: f64, to: f64, dragging: bool| {
            let mut settings = PaneSettings::of(inp.session);
            settings.sweep = Some(SweepSettings {
                param: param.to_string(),
                from,
                to,
                max_step: inp.session.sweep.as_ref().and_then(|w| w.max_step),
            });
            Command::SetPanes { settings, dragging }
        };
        ui.horizontal(|ui| {
            ui.label("sweep");
            let chosen = param_choice(ui, "sweep-param", "swept parameter", &name, &names);
            if chosen != name {
                let (lo, hi) = range_of(&inp.session.parameters, &chosen).unwrap_or((from, to));
                self.refused = None;
                commands.push(set_sweep(&chosen, lo, hi, false));
            }
            let (mut a, mut b) = (from, to);
            ui.label("from");
            let ra = ui.add(egui::DragValue::new(&mut a).speed(0.01).max_decimals(6));
            accessible_name(&ra, egui::Role::SpinButton, "sweep from");
            ui.label("to");
            let rb = ui.add(egui::DragValue::new(&mut b).speed(0.01).max_decimals(6));
            accessible_name(&rb, egui::Role::SpinButton, "sweep to");
            if ra.changed() || rb.changed() {
                if a < b && a.is_finite() && b.is_finite() {
                    self.refused = None;
                    commands.push(set_sweep(&name, a, b, ra.dragged() || rb.dragged()));
                } else {
                    self.refused = Some(format!(
                        "sweep range: from ({a}) must be less than to ({b}); range kept"
                    ));
                }
            }
        });
        self.status_row(ui, ViewKind::Diagram);
        let current = value_of(&inp.session.parameters, &name);
        let (generation, sys) = match &self.shown[0] {
            Some(c) => (c.generation, c.system.clone()),
            None => {
                ui.label("Computing the branches…");
                return;
            }
        };
        let sweep = self.sweep().cloned();
        if let Some(sw) = &sweep {
            self.figures[0].update(generation, &[current.unwrap_or(f64::NAN)], || {
                vec![Scene::diagram(&sys, sw, current)]
            });
        }
        let Some(view) = self.figures[0].views.first() else {
            return;
        };
        let height = (ui.available_height() - 110.0).max(160.0);
        let clicked = pane_plot(ui, "bifurcation-diagram", DIAGRAM_LABEL, view, look, height);
        if let Some(x) = clicked {
            let (lo, hi) = range_of(&inp.session.parameters, &name).unwrap_or((from, to));
            // On the slider's steps when it has them, as the slider would set it.
            let step = inp
                .session
                .parameter(&name)
                .and_then(|p| p.step)
                .filter(|s| *s > 0.0);
            let x = match step {
                Some(s) => lo + ((x - lo) / s).round() * s,
                None => x,
            };
            commands.push(Command::SetParam {
                name: name.clone(),
                value: x.clamp(lo, hi),
                dragging: false,
            });
        }
        ui.small("Click the sweep to set the parameter there. Centers solid, saddles dashed.");
        if let Some(sw) = &sweep {
            if sw.bifurcations.is_empty() {
                ui.label(format!("No bifurcation for {name} in {from} .. {to}."));
            }
            for b in &sw.bifurcations {
                ui.label(format!(
                    "{} at {} = {} (q = {}, p = {})",
                    b.kind.name(),
                    name,
                    label_number(b.param),
                    label_number(b.q),
                    label_number(b.p)
                ));
            }
        }
    }

    pub(super) fn folds_ui(
        &mut self,
        ui: &mut egui::Ui,
        inp: &Inputs,
        r: &PaneRequests,
        look: &Look,
        commands: &mut Vec<Command>,
    ) {
        let names = param_names(inp);
        let Some(FoldsRequest {
            params: pair,
            bounds,
            ..
        }) = r.folds.clone()
        else {
            ui.label("Fold curves need a formula with two parameters.");
            return;
        };
        let mut new_pair = pair.clone();
        let mut b = bounds;
        let mut dragged = false;
        let mut changed = false;
        egui::Grid::new("fold-settings")
            .num_columns(5)
            .show(ui, |ui| {
                for k in 0..2 {
                    ui.label(if k == 0 {
                        "horizontal axis"
                    } else {
                        "vertical axis"
                    });
                    new_pair[k] = param_choice(
                        ui,
                        ("fold-param", k),
                        if k == 0 {
                            "fold parameter on the horizontal axis"
                        } else {
                            "fold parameter on the vertical axis"
                        },
                        &pair[k],
                        &names,
                    );
                    ui.label("from");
                    let ra = ui.add(
                        egui::DragValue::new(&mut b[2 * k])
                            .speed(0.01)
                            .max_decimals(6),
                    );
                    accessible_name(
                        &ra,
                        egui::Role::SpinButton,
                        &format!("fold {} from", pair[k]),
                    );
                    let rb = ui.add(
                        egui::DragValue::new(&mut b[2 * k + 1])
                            .speed(0.01)
                            .max_decimals(6)
                            .prefix("to "),
                    );
                    accessible_name(&rb, egui::Role::SpinButton, &format!("fold {} to", pair[k]));
                    changed |= ra.changed() || rb.changed();
                    dragged |= ra.dragged() || rb.dragged();
                    ui.end_row();
                }
            });
        if new_pair != pair {
            for k in 0..2 {
                if new_pair[k] != pair[k]
                    && let Some((lo, hi)) = range_of(&inp.session.parameters, &new_pair[k])
                {
                    b[2 * k] = lo;
                    b[2 * k + 1] = hi;
                }
            }
            changed = true;
        }
        if changed {
            let bad = (0..2).find(|&k| {
                !(b[2 * k] < b[2 * k + 1]) || !b[2 * k].is_finite() || !b[2 * k + 1].is_finite()
            });
            if new_pair[0] == new_pair[1] {
                self.refused = Some(format!(
                    "fold curves: choose two different parameters (both are {}); kept",
                    new_pair[0]
                ));
            } else if let Some(k) = bad {
                self.refused = Some(format!(
                    "fold box: {} from ({}) must be less than to ({}); box kept",
                    new_pair[k],
                    b[2 * k],
                    b[2 * k + 1]
                ));
            } else {
                self.refused = None;
                let mut s = PaneSettings::of(inp.session);
                s.folds = Some(FoldSettings {
                    params: new_pair.clone(),
                    bounds: b,
                });
                commands.push(Command::SetPanes {
                    settings: s,
                    dragging: dragged,
                });
            }
        }
        self.status_row(ui, ViewKind::Folds);
        let current = match (
            value_of(&inp.session.parameters, &pair[0]),
            value_of(&inp.session.parameters, &pair[1]),
        ) {
            (Some(a), Some(c)) => Some([a, c]),
            _ => None,
        };
        let Some(c) = &self.shown[1] else {
            ui.label("Computing the fold curves…");
            return;
        };
        let (generation, sys) = (c.generation, c.system.clone());
        let folds = self.folds().cloned();
        if let Some(f) = &folds {
            let extra = current.map_or(vec![f64::NAN; 2], |c| c.to_vec());
            self.figures[1].update(generation, &extra, || vec![Scene::folds(&sys, f, current)]);
        }
        let Some(view) = self.figures[1].views.first() else {
            return;
        };
        let height = (ui.available_height() - 90.0).max(160.0);
        let _ = pane_plot(ui, "fold-curve", FOLDS_LABEL, view, look, height);
        if let Some(f) = &folds {
            ui.small(format!(
                "Equilibria are born or vanish in pairs across the curve; {} curve piece(s), {} cusp(s).",
                f.curves.len(),
                f.cusps.len()
            ));
            for c in &f.cusps {
                ui.label(format!(
                    "cusp at {} = {}, {} = {}",
                    pair[0],
                    label_number(c.params[0]),
                    pair[1],
                    label_number(c.params[1])
                ));
            }
        }
    }

    pub(super) fn backbone_ui(
        &mut self,
        ui: &mut egui::Ui,
        inp: &Inputs,
        r: &PaneRequests,
        look: &Look,
        commands: &mut Vec<Command>,
    ) {
        let list = centers(inp.analysis);
        let Some(center) = r.backbone.as_ref().map(|b| b.center) else {
            ui.label("There is no center in view: a backbone needs a well.");
            return;
        };
        let v = &inp.session.view;
        let (qs, ps) = (v.qmax - v.qmin, v.pmax - v.pmin);
        let show = |c: [f64; 2]| {
            format!(
                "center at ({}, {})",
                label_number(clean(c[0], qs)),
                label_number(clean(c[1], ps))
            )
        };
        ui.horizontal(|ui| {
            ui.label("well of the");
            let mut chosen = center;
            let r = egui::ComboBox::from_id_salt("backbone-center")
                .selected_text(show(center))
                .show_ui(ui, |ui| {
                    for c in &list {
                        ui.selectable_value(&mut chosen, *c, show(*c));
                    }
                });
            accessible_name(&r.response, egui::Role::ComboBox, "backbone center");
            if chosen != center {
                let mut s = PaneSettings::of(inp.session);
                s.backbone = Some(BackboneSettings {
                    center: Some(chosen),
                    ..s.backbone.unwrap_or_default()
                });
                commands.push(Command::SetPanes {
                    settings: s,
                    dragging: false,
                });
            }
        });
        self.status_row(ui, ViewKind::Backbone);
        let Some(c) = &self.shown[2] else {
            ui.label("Computing the backbone…");
            return;
        };
        let (generation, sys) = (c.generation, c.system.clone());
        let bb = self.backbone().cloned();
        let undriven = match &c.spec.task {
            ViewTask::Backbone(req) => req.undriven.clone(),
            _ => None,
        };
        if let Some(b) = &bb {
            self.figures[2].update(generation, &[], || {
                [BackbonePlot::PeriodEnergy, BackbonePlot::FrequencyAmplitude]
                    .map(|plot| Scene::backbone(&sys, b, plot).of_undriven(undriven.as_deref()))
                    .to_vec()
            });
        }
        if let Some(name) = &undriven {
            ui.small(format!(
                "H depends on t, so this is the backbone of the undriven H\u{2080} ({name} = 0)."
            ));
        }
        if self.figures[2].views.len() < 2 {
            return;
        }
        let height = ((ui.available_height() - 90.0) / 2.0).max(130.0);
        let _ = pane_plot(
            ui,
            "backbone-period",
            BACKBONE_LABEL,
            &self.figures[2].views[0],
            look,
            height,
        );
        let _ = pane_plot(
            ui,
            "backbone-frequency",
            FREQUENCY_LABEL,
            &self.figures[2].views[1],
            look,
            height,
        );
        if let Some(b) = &bb
            && let Some(first) = b.rows.first()
        {
            ui.label(format!(
                "period at the bottom (E = {}): {:.5}",
                label_number(first.energy),
                first.period
            ));
            match b.escape_energy {
                Some(e) => ui.label(format!(
                    "escape energy {}: the period grows without bound towards it",
                    label_number(e)
                )),
                None => ui.label("the well reaches the edge of the window before a saddle"),
            };
            if let Some(shift) = &b.frequency_shift {
                ui.label(crate::scene::shift_text(shift));
            }
        }
    }
}
