//! Result tables under the plot: equilibria, wells and orbits, and the
//! Bohr–Sommerfeld levels of each well when the session sets ħ. Each row is
//! selectable (the plot highlights the selected item); orbit rows can be
//! deleted and their method and duration edited.

use crate::core::analysis::Analysis;
use crate::core::equilibria::Equilibrium;
use crate::core::levels::WellLevels;
use crate::numbers::fixed;
use crate::request::LevelsResult;
use crate::session::SeededOrbit;
use std::sync::Arc;

use super::orbits::{METHODS, OrbitOutcome};
use super::plot_panel::{eigen_text, kind_name};
use super::{Command, Selection};

#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Tab {
    #[default]
    Equilibria,
    Wells,
    Orbits,
    Levels,
}

#[derive(Default)]
pub struct TablesPanel {
    pub tab: Tab,
}

/// Text of the equilibria table: q, p, E, kind, eigenvalues, ω or λ, κ.
pub fn equilibrium_rows(eqs: &[Equilibrium]) -> Vec<[String; 7]> {
    eqs.iter()
        .map(|e| {
            let rate = match (e.omega, e.lambda) {
                (Some(w), _) => format!("ω = {w:.5}"),
                (None, Some(l)) => format!("λ = {l:.5}"),
                _ => "—".into(),
            };
            // κ in a column of its own, short, so the row fits the pane
            let shift = e.frequency_shift.map_or("—".into(), |k| {
                format!(
                    "{} {}",
                    crate::numbers::caption(k),
                    crate::scene::shift_name(k)
                )
            });
            [
                fixed(e.q, 5),
                fixed(e.p, 5),
                fixed(e.energy, 6),
                kind_name(e.kind).to_string(),
                eigen_text(e),
                rate,
                shift,
            ]
        })
        .collect()
}

/// Text of the wells table: center position, bottom energy, escape energy, depth.
pub fn well_rows(a: &Analysis) -> Vec<[String; 4]> {
    let opt = |v: Option<f64>| v.map_or("— (not bounded in view)".to_string(), |x| fixed(x, 6));
    a.wells
        .iter()
        .map(|w| {
            [
                format!("({}, {})", fixed(w.q, 4), fixed(w.p, 4)),
                fixed(w.energy, 6),
                opt(w.escape_energy),
                opt(w.depth),
            ]
        })
        .collect()
}

/// Text of a well's levels table: n, Eₙ, Eₙ − E₀, spacing Eₙ₊₁ − Eₙ.
pub fn level_rows(w: &WellLevels) -> Vec<[String; 4]> {
    let e0 = w.levels.first().map_or(f64::NAN, |l| l.energy);
    w.levels
        .iter()
        .map(|l| {
            [
                l.n.to_string(),
                fixed(l.energy, 6),
                fixed(l.energy - e0, 6),
                l.spacing.map_or("—".to_string(), |d| fixed(d, 6)),
            ]
        })
        .collect()
}

/// The line above a well's levels: where it is, how many levels are bound
/// below which energy, and the tunnelling splitting with its caution.
pub fn well_levels_summary(w: &WellLevels) -> Vec<String> {
    let top = match w.escape_energy {
        Some(e) => format!("the escape energy {}", fixed(e, 6)),
        None => format!(
            "{} (where the well leaves the view)",
            fixed(w.top_energy, 6)
        ),
    };
    let mut lines = vec![format!(
        "Well at ({}, {}): {} bound level{} below {top}",
        fixed(w.center[0], 4),
        fixed(w.center[1], 4),
        w.count,
        if w.count == 1 { "" } else { "s" },
    )];
    if w.levels.len() < w.count {
        lines.push(format!("the lowest {} are listed", w.levels.len()));
    }
    if let Some(sp) = &w.splitting {
        lines.push(format!(
            "Tunnelling splitting of the lowest pair with the mirror well at ({}, {}): \
             ΔE ≈ {} (S/ħ = {:.2}). An estimate, (ħω/π)·exp(−S/ħ), for a thick barrier; \
             not a spectroscopic value.",
            fixed(sp.partner[0], 4),
            fixed(sp.partner[1], 4),
            crate::numbers::caption(sp.splitting),
            sp.exponent
        ));
    }
    lines.extend(w.diagnostics.iter().map(|d| d.message.clone()));
    lines
}

/// Text of the orbits table: start, period, action, frequency, energy error (relative), stop reason.
pub fn orbit_row(s: &SeededOrbit, o: Option<&OrbitOutcome>) -> [String; 6] {
    let num = |v: Option<f64>| v.map_or("—".to_string(), |x| format!("{x:.5}"));
    match o {
        Some(o) => [
            format!("({:.4}, {:.4})", s.q0, s.p0),
            num(o.period),
            num(o.action),
            num(o.frequency),
            o.relative_energy_error
                .map_or("—".into(), |d| format!("{d:.2e}")),
            o.stop.clone(),
        ],
        None => [
            format!("({:.4}, {:.4})", s.q0, s.p0),
            "…".into(),
            "…".into(),
            "…".into(),
            "…".into(),
            "computing".into(),
        ],
    }
}

impl TablesPanel {
    pub fn ui(
        &mut self,
        ui: &mut egui::Ui,
        analysis: Option<&Analysis>,
        orbits: &[SeededOrbit],
        outcomes: &[Option<Arc<OrbitOutcome>>],
        selection: Selection,
        levels: Option<&LevelsResult>,
    ) -> Vec<Command> {
        let mut commands = Vec::new();
        if levels.is_none() && self.tab == Tab::Levels {
            self.tab = Tab::Equilibria;
        }
        ui.horizontal(|ui| {
            let ne = analysis.map_or(0, |a| a.equilibria.len());
            let nw = analysis.map_or(0, |a| a.wells.len());
            ui.selectable_value(&mut self.tab, Tab::Equilibria, format!("Equilibria ({ne})"));
            ui.selectable_value(&mut self.tab, Tab::Wells, format!("Wells ({nw})"));
            ui.selectable_value(
                &mut self.tab,
                Tab::Orbits,
                format!("Orbits ({})", orbits.len()),
            );
            if let Some(l) = levels {
                let n: usize = l.wells.iter().map(|w| w.count).sum();
                ui.selectable_value(&mut self.tab, Tab::Levels, format!("Levels ({n})"));
            }
        });
        ui.separator();
        // Scrolling both ways keeps a table wider than the panel inside it: a
        // table that overflows widens the panel, and with it the panel's
        // separator, across the diagram pane beside it.
        egui::ScrollArea::both()
            .auto_shrink([false, false])
            .show(ui, |ui| match self.tab {
                Tab::Equilibria => {
                    let rows = analysis
                        .map(|a| equilibrium_rows(&a.equilibria))
                        .unwrap_or_default();
                    if rows.is_empty() {
                        ui.label("No equilibria in view.");
                    }
                    table(
                        ui,
                        "eq-table",
                        &["#", "q", "p", "E", "kind", "eigenvalues", "ω or λ", "κ"],
                        &rows,
                        |i| Selection::Equilibrium(i),
                        selection,
                        &mut commands,
                    );
                }
                Tab::Wells => {
                    let rows = analysis.map(well_rows).unwrap_or_default();
                    if rows.is_empty() {
                        ui.label("No wells in view (a well needs a center).");
                    }
                    table(
                        ui,
                        "well-table",
                        &["#", "center", "E at center", "escape energy", "depth"],
                        &rows,
                        |i| Selection::Well(i),
                        selection,
                        &mut commands,
                    );
                }
                Tab::Orbits => self.orbit_table(ui, orbits, outcomes, selection, &mut commands),
                Tab::Levels => {
                    if let Some(l) = levels {
                        levels_tables(ui, l);
                    }
                }
            });
        commands
    }

    fn orbit_table(
        &mut self,
        ui: &mut egui::Ui,
        orbits: &[SeededOrbit],
        outcomes: &[Option<Arc<OrbitOutcome>>],
        selection: Selection,
        commands: &mut Vec<Command>,
    ) {
        if orbits.is_empty() {
            ui.label("No orbits yet: click in the plot to launch one.");
            return;
        }
        egui::Grid::new("orbit-table")
            .striped(true)
            .num_columns(10)
            .show(ui, |ui| {
                for h in [
                    "#",
                    "start (q, p)",
                    "period",
                    "action",
                    "frequency ω",
                    "energy error",
                    "stopped",
                    "method",
                    "longest duration",
                    "",
                ] {
                    ui.strong(h);
                }
                ui.end_row();
                for (i, s) in orbits.iter().enumerate() {
                    let row = orbit_row(s, outcomes.get(i).and_then(|o| o.as_deref()));
                    if ui
                        .selectable_label(selection == Selection::Orbit(i), format!("{}", i + 1))
                        .clicked()
                    {
                        commands.push(Command::Select(Selection::Orbit(i)));
                    }
                    let early = outcomes
                        .get(i)
                        .and_then(|o| o.as_deref())
                        .is_some_and(|o| o.stopped_early);
                    for (k, cell) in row.iter().enumerate() {
                        if k == 5 && early {
                            ui.colored_label(ui.visuals().warn_fg_color, cell);
                        } else {
                            ui.label(cell);
                        }
                    }
                    let mut method = s.method.clone();
                    egui::ComboBox::from_id_salt(("orbit-method", i))
                        .selected_text(&method)
                        .show_ui(ui, |ui| {
                            for m in METHODS {
                                ui.selectable_value(&mut method, m.to_string(), *m);
                            }
                        });
                    let mut duration = s.duration;
                    let rd = ui
                        .add(
                            egui::DragValue::new(&mut duration)
                                .speed(0.5)
                                .max_decimals(3),
                        )
                        .on_hover_text("at most this long: the orbit stops once it closes");
                    super::params_panel::accessible_name(
                        &rd,
                        egui::Role::SpinButton,
                        &format!("orbit {} duration", i + 1),
                    );
                    if method != s.method
                        || (rd.changed() && duration.is_finite() && duration != 0.0)
                    {
                        let mut edited = s.clone();
                        edited.method = method;
                        edited.duration = duration;
                        commands.push(Command::EditOrbit {
                            index: i,
                            orbit: edited,
                            dragging: rd.dragged(),
                        });
                    }
                    if ui
                        .button("Delete")
                        .on_hover_text(format!("delete orbit {}", i + 1))
                        .clicked()
                    {
                        commands.push(Command::DeleteOrbit(i));
                    }
                    ui.end_row();
                }
            });
    }
}

/// Each well's levels under its summary; the wells that gave none, with why.
fn levels_tables(ui: &mut egui::Ui, l: &LevelsResult) {
    ui.small(format!(
        "Bohr–Sommerfeld levels, I(E(n)) = ħ(n + ½) with ħ = {}: semiclassical estimates \
         for an idealised model, not spectroscopic values.",
        crate::numbers::caption(l.hbar)
    ));
    if l.wells.is_empty() && l.refused.is_empty() {
        ui.label("No well in view: the levels need a center.");
    }
    for (k, w) in l.wells.iter().enumerate() {
        ui.add_space(4.0);
        for line in well_levels_summary(w) {
            ui.label(line);
        }
        egui::Grid::new(("levels-table", k))
            .striped(true)
            .num_columns(4)
            .show(ui, |ui| {
                for h in ["n", "E(n)", "E(n) − E(0)", "spacing E(n+1) − E(n)"] {
                    ui.strong(h);
                }
                ui.end_row();
                for row in level_rows(w) {
                    for cell in row {
                        ui.label(cell);
                    }
                    ui.end_row();
                }
            });
    }
    for r in &l.refused {
        ui.colored_label(
            ui.visuals().warn_fg_color,
            format!(
                "Center at ({}, {}): no levels: {}",
                fixed(r.center[0], 4),
                fixed(r.center[1], 4),
                r.problem
            ),
        );
    }
}

fn table<const N: usize>(
    ui: &mut egui::Ui,
    id: &str,
    header: &[&str],
    rows: &[[String; N]],
    select: impl Fn(usize) -> Selection,
    selection: Selection,
    commands: &mut Vec<Command>,
) {
    if rows.is_empty() {
        return;
    }
    egui::Grid::new(id)
        .striped(true)
        .num_columns(N + 1)
        .show(ui, |ui| {
            for h in header {
                ui.strong(*h);
            }
            ui.end_row();
            for (i, row) in rows.iter().enumerate() {
                let sel = select(i);
                if ui
                    .selectable_label(selection == sel, format!("{}", i + 1))
                    .clicked()
                {
                    commands.push(Command::Select(if selection == sel {
                        Selection::None
                    } else {
                        sel
                    }));
                }
                for cell in row {
                    if ui.selectable_label(selection == sel, cell).clicked() {
                        commands.push(Command::Select(if selection == sel {
                            Selection::None
                        } else {
                            sel
                        }));
                    }
                }
                ui.end_row();
            }
        });
}
