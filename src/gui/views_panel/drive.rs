//! The panes of a driven session: the stroboscopic section (a click adds a
//! start, kept in the session as a seeded orbit) and the Melnikov function
//! over one drive period with its zeros and threshold.

use super::*;
use crate::scene::threshold_sentence;

impl ViewsPanel {
    /// Why a driven pane has nothing to show: no drive, or a drive whose
    /// expressions are bad (the message names the field).
    pub(super) fn no_drive(ui: &mut egui::Ui, inp: &Inputs) {
        match inp.session.drive() {
            Ok(None) => {
                ui.label(
                    "The session has no drive. Switch one on in the Drive area of the \
                     parameter panel (a period, and H written with t).",
                );
            }
            Ok(Some(_)) => {
                ui.label("The drive has no amplitude parameter to switch it off.");
            }
            Err(e) => {
                ui.colored_label(ui.visuals().error_fg_color, e.to_string());
            }
        }
    }

    pub(super) fn section_ui(
        &mut self,
        ui: &mut egui::Ui,
        inp: &Inputs,
        r: &PaneRequests,
        look: &Look,
        commands: &mut Vec<Command>,
    ) {
        let Some(req) = &r.section else {
            Self::no_drive(ui, inp);
            return;
        };
        self.status_row(ui, ViewKind::Section);
        let Some(c) = &self.shown[3] else {
            ui.label("Computing the section…");
            return;
        };
        let (generation, sys, window) = (c.generation, c.system.clone(), c.spec.window);
        let coarse = match &c.spec.task {
            ViewTask::Section { request, .. } => request.cfg.periods < req.cfg.periods,
            _ => false,
        };
        let data = self.section().cloned();
        if let Some(d) = &data {
            self.figures[3].update(generation, &[], || {
                vec![Scene::section(
                    &sys,
                    &d.section,
                    d.undriven.as_ref(),
                    &window,
                    &d.colours,
                )]
            });
        }
        let Some(view) = self.figures[3].views.first() else {
            return;
        };
        let height = (ui.available_height() - 80.0).max(200.0);
        if let Some([q, p]) = pane_plot_at(ui, "section", SECTION_LABEL, view, look, height) {
            commands.push(Command::LaunchOrbit { q, p });
        }
        if let Some(d) = &data {
            let s = &d.section;
            ui.small(format!(
                "{} starts, {} drive periods each{}; {} with {} steps a period.",
                s.orbits.len(),
                s.orbits.iter().map(|o| o.points.len()).max().unwrap_or(0),
                if coarse {
                    " (a quick look while dragging)"
                } else {
                    ""
                },
                s.method.name(),
                s.steps_per_period
            ));
        }
        ui.small(
            "One dot per drive period for each start, in its own colour; the undriven \
             separatrices in grey. Click to add a start (kept as a seeded orbit). Dots \
             that spread into a band near the saddle mark the chaotic layer.",
        );
    }

    pub(super) fn melnikov_ui(
        &mut self,
        ui: &mut egui::Ui,
        inp: &Inputs,
        r: &PaneRequests,
        look: &Look,
    ) {
        if r.melnikov.is_none() {
            Self::no_drive(ui, inp);
            if let (Some(sys), Ok(Some(_))) = (inp.system, inp.session.drive())
                && let Err(e) = MelnikovRequest::from_session(inp.session, sys)
            {
                ui.colored_label(ui.visuals().error_fg_color, e);
            }
            return;
        }
        self.status_row(ui, ViewKind::Melnikov);
        let Some(c) = &self.shown[4] else {
            ui.label("Tracing the connections…");
            return;
        };
        let (generation, sys) = (c.generation, c.system.clone());
        let Some(m) = self.melnikov().cloned() else {
            return;
        };
        if m.connections.is_empty() {
            ui.label(
                "The undriven H has no separatrix connection in view, so there is no \
                 Melnikov function; widen the view to take in a saddle and its loop.",
            );
            return;
        }
        self.figures[4].update(generation, &[], || vec![Scene::melnikov(&sys, &m)]);
        let show = |k: Option<usize>| match k {
            None => "all connections".to_string(),
            Some(k) => format!("connection {}", k + 1),
        };
        if self.connection.is_some_and(|k| k >= m.connections.len()) {
            self.connection = None;
        }
        ui.horizontal(|ui| {
            ui.label("Stress the connection:");
            let mut chosen = self.connection;
            let r = egui::ComboBox::from_id_salt("melnikov-connection")
                .selected_text(show(chosen))
                .show_ui(ui, |ui| {
                    ui.selectable_value(&mut chosen, None, show(None));
                    for k in 0..m.connections.len() {
                        ui.selectable_value(&mut chosen, Some(k), show(Some(k)));
                    }
                });
            accessible_name(&r.response, egui::Role::ComboBox, "Melnikov connection");
            self.connection = chosen;
        });
        let Some(view) = self.figures[4].views.first() else {
            return;
        };
        let look = Look {
            emphasised: self.connection,
            ..*look
        };
        let height = (ui.available_height() - 90.0).max(180.0);
        let _ = pane_plot(ui, "melnikov", MELNIKOV_LABEL, view, &look, height);
        ui.strong(threshold_sentence(&m));
        if let Some(a) = m.threshold_amplitude.filter(|_| m.damping > 0.0) {
            let now = m.amplitude_value;
            ui.label(format!(
                "now {} = {}: {}",
                m.amplitude,
                label_number(now),
                if now > a {
                    "above it, M(t\u{2080}) changes sign: the separatrix breaks up"
                } else {
                    "below it, M(t\u{2080}) keeps one sign: the separatrix holds"
                }
            ));
        }
        let selected = self.connection.and_then(|k| m.connections.get(k));
        for (k, c) in m.connections.iter().enumerate() {
            if selected.is_some_and(|s| !std::ptr::eq(s, c)) {
                continue;
            }
            let zeros: Vec<String> = c.zeros.iter().map(|z| label_number(*z)).collect();
            ui.small(format!(
                "connection {}: {} simple zero(s){}{}",
                k + 1,
                c.zeros.len(),
                if zeros.is_empty() {
                    ""
                } else {
                    " at t\u{2080} = "
                },
                zeros.join(", ")
            ));
        }
        ui.small(
            "A first-order estimate for a weak drive and light damping on a conservative \
             model; not a design margin.",
        );
    }
}
