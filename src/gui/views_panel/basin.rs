//! The safe-basin panes of a driven session: the mask of each well's safe
//! starts over the phase plane with its integrity measures (a quick look
//! on a coarse lattice while a slider is dragged, the full lattice after),
//! and the erosion curve against the drive amplitude, computed only when
//! asked for since it repeats the basin for every amplitude.

use super::*;
use crate::core::basin::WellBasin;
use crate::numbers::{caption, fixed};

/// One well's measures as the pane states them: the global integrity (safe
/// share of the undriven well) with its counts, and the local integrity.
pub fn well_integrity_text(w: &WellBasin) -> String {
    format!(
        "well at q = {}: global integrity {} ({} of {} starts safe), local integrity {}{}",
        caption(w.center[0]),
        fixed(w.integrity, 4),
        w.safe,
        w.starts,
        fixed(w.local_integrity, 4),
        if w.truncated {
            "; the view cuts this well off, widen it for the whole basin"
        } else {
            ""
        }
    )
}

impl ViewsPanel {
    /// Why a safe-basin pane has nothing to run: no drive (the section's
    /// message), or the request's own reason.
    fn no_basin(ui: &mut egui::Ui, inp: &Inputs, why: Option<String>) {
        Self::no_drive(ui, inp);
        if let (Some(e), Ok(Some(_))) = (why, inp.session.drive()) {
            ui.colored_label(ui.visuals().error_fg_color, e);
        }
    }

    pub(super) fn basin_ui(
        &mut self,
        ui: &mut egui::Ui,
        inp: &Inputs,
        r: &PaneRequests,
        look: &Look,
    ) {
        let Some(req) = &r.basin else {
            let why = inp
                .system
                .and_then(|sys| BasinRequest::from_session(inp.session, sys).err());
            Self::no_basin(ui, inp, why);
            return;
        };
        let i = ViewKind::Basin.index();
        self.status_row(ui, ViewKind::Basin);
        let Some(c) = &self.shown[i] else {
            ui.label("Following the lattice of starts…");
            return;
        };
        let (generation, sys) = (c.generation, c.system.clone());
        let quick = match &c.spec.task {
            ViewTask::Basin(shown) => shown.cfg != req.cfg,
            _ => false,
        };
        let Some(d) = self.basin().cloned() else {
            return;
        };
        self.figures[i].update(generation, &[], || {
            // the measures are written under the plot, where the labels of
            // neighbouring wells cannot run into each other
            let mut scene = Scene::basin(&sys, &d.basin, &d.separatrices);
            for m in &mut scene.marks {
                m.label = None;
            }
            vec![scene]
        });
        let Some(view) = self.figures[i].views.first() else {
            return;
        };
        let lines = d.basin.wells.len() as f32;
        let height = (ui.available_height() - 90.0 - 18.0 * lines).max(200.0);
        let _ = pane_plot(ui, "basin", BASIN_LABEL, view, look, height);
        let b = &d.basin;
        ui.small(format!(
            "{n}×{n} starts, {} drive periods each{}; {} with {} steps a period.",
            b.periods,
            if quick {
                " (a quick look while dragging)"
            } else {
                ""
            },
            b.method.name(),
            b.steps_per_period,
            n = b.lattice,
        ));
        for w in &b.wells {
            ui.small(well_integrity_text(w));
        }
        ui.small(
            "Filled cells: starts in a well that stay on its side of every saddle at each \
             drive period; pale cells: starts that left. Global integrity is the safe share \
             of the undriven well, local integrity the safe disc about its center. An \
             indication for a single-mode model, not a margin.",
        );
    }

    pub(super) fn erosion_ui(
        &mut self,
        ui: &mut egui::Ui,
        inp: &Inputs,
        r: &PaneRequests,
        look: &Look,
    ) {
        let (Some(req), Some(sys)) = (&r.erosion, inp.system) else {
            let why = inp
                .system
                .and_then(|sys| ErosionRequest::from_session(inp.session, sys).err());
            Self::no_basin(ui, inp, why);
            return;
        };
        let i = ViewKind::Erosion.index();
        let spec = Self::erosion_spec(inp, sys, req);
        let n = req.basin.cfg.lattice;
        ui.small(format!(
            "{} from {} to {}, {} values; {n}×{n} starts, {} drive periods each \
             (the session's basin settings, else the slider's range).",
            req.amplitude,
            caption(req.from),
            caption(req.to),
            req.values,
            req.basin.cfg.periods,
        ));
        let running = self.pending(ViewKind::Erosion);
        ui.add_enabled_ui(!running, |ui| {
            if ui.button("Compute erosion curve").clicked() {
                self.erosion_wanted = Some(spec.clone());
                // asked again for the same settings: run it again
                self.last_spec[i] = None;
            }
        });
        self.status_row(ui, ViewKind::Erosion);
        let Some(c) = &self.shown[i] else {
            if !running {
                ui.label(
                    "The curve repeats the safe basin for every amplitude, so it takes a \
                     while: press the button to compute it.",
                );
            }
            return;
        };
        let (generation, shown_sys, stale) = (c.generation, c.system.clone(), c.spec != spec);
        let Some(e) = self.erosion().cloned() else {
            return;
        };
        let current = value_of(&inp.session.parameters, &e.amplitude);
        self.figures[i].update(generation, &[current.unwrap_or(f64::NAN)], || {
            vec![Scene::erosion(&shown_sys, &e, current)]
        });
        let Some(view) = self.figures[i].views.first() else {
            return;
        };
        let height = (ui.available_height() - 110.0).max(180.0);
        let _ = pane_plot(ui, "erosion", EROSION_LABEL, view, look, height);
        if stale && !running {
            ui.colored_label(
                ui.visuals().warn_fg_color,
                "The settings changed since this curve was computed; press the button to \
                 follow them.",
            );
        }
        match e.threshold {
            Some(t) => ui.small(format!(
                "Melnikov threshold {} = {} (dashed); the solid guide is the slider's value.",
                e.amplitude,
                caption(t)
            )),
            None if e.cancelled => ui.small("Stopped before the Melnikov threshold was found."),
            None => ui.small(
                "No Melnikov threshold for this drive (no damping, or no separatrix \
                 connection in view).",
            ),
        };
        ui.small(
            "Global integrity solid, local integrity dashed, one colour per well; look \
             for where the curves drop.",
        );
    }
}
