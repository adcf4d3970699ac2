//! The bar along the top: session files, examples, edit history, view options, about.

use std::path::PathBuf;

use super::files::EXAMPLES;
use super::{Command, Guarded};
use crate::render::{ExportFormat, FigureFormat, PortraitTable, View};
use crate::scene::BackbonePlot;

pub struct MenuState<'a> {
    pub recent: &'a [PathBuf],
    pub can_undo: bool,
    pub can_redo: bool,
    pub dark: bool,
    /// The diagram pane has a sweep to show (so the diagram can be exported).
    pub has_sweep: bool,
    /// The fold pane has a parameter plane to show.
    pub has_folds: bool,
    /// The session has a drive to make a section of.
    pub has_section: bool,
    /// The session has a drive with a known amplitude for a Melnikov function.
    pub has_melnikov: bool,
    /// The session has a good ħ and a well in view (levels to export).
    pub has_levels: bool,
    /// The session has a drive for safe basins.
    pub has_basin: bool,
    /// … and an amplitude to vary for the erosion curve.
    pub has_erosion: bool,
}

pub fn ui(ui: &mut egui::Ui, st: &MenuState<'_>) -> Vec<Command> {
    let mut out = Vec::new();
    egui::MenuBar::new().ui(ui, |ui| {
        ui.menu_button("Session", |ui| {
            if ui
                .add(egui::Button::new("New").shortcut_text("Ctrl+N"))
                .clicked()
            {
                out.push(Command::Guarded(Guarded::New));
            }
            if ui
                .add(egui::Button::new("Open…").shortcut_text("Ctrl+O"))
                .clicked()
            {
                out.push(Command::Guarded(Guarded::OpenDialog));
            }
            if ui.button("Open by path…").clicked() {
                out.push(Command::Guarded(Guarded::OpenPrompt));
            }
            ui.menu_button("Open recent", |ui| {
                if st.recent.is_empty() {
                    ui.label("(none yet)");
                }
                for p in st.recent {
                    if ui.button(p.display().to_string()).clicked() {
                        out.push(Command::Guarded(Guarded::OpenPath(p.clone())));
                    }
                }
            });
            ui.separator();
            if ui
                .add(egui::Button::new("Save").shortcut_text("Ctrl+S"))
                .clicked()
            {
                out.push(Command::Save);
            }
            if ui
                .add(egui::Button::new("Save as…").shortcut_text("Ctrl+Shift+S"))
                .clicked()
            {
                out.push(Command::SaveAs);
            }
            if ui.button("Save to path…").clicked() {
                out.push(Command::SavePrompt);
            }
            ui.separator();
            if ui
                .add(egui::Button::new("Quit").shortcut_text("Ctrl+Q"))
                .clicked()
            {
                out.push(Command::Guarded(Guarded::Quit));
            }
        });
        ui.menu_button("Export", |ui| export_menu(ui, st, &mut out));
        ui.menu_button("Examples", |ui| {
            if EXAMPLES.is_empty() {
                if ui.button("Harmonic oscillator (built in)").clicked() {
                    out.push(Command::Guarded(Guarded::Builtin));
                }
            }
            for (i, (name, _)) in EXAMPLES.iter().enumerate() {
                if ui.button(example_title(name)).clicked() {
                    out.push(Command::Guarded(Guarded::OpenExample(i)));
                }
            }
        });
        ui.menu_button("Edit", |ui| {
            if ui
                .add_enabled(
                    st.can_undo,
                    egui::Button::new("Undo").shortcut_text("Ctrl+Z"),
                )
                .clicked()
            {
                out.push(Command::Undo);
            }
            if ui
                .add_enabled(
                    st.can_redo,
                    egui::Button::new("Redo").shortcut_text("Ctrl+Shift+Z / Ctrl+Y"),
                )
                .clicked()
            {
                out.push(Command::Redo);
            }
        });
        ui.menu_button("View", |ui| {
            let mut dark = st.dark;
            if ui.radio_value(&mut dark, false, "Light theme").clicked()
                || ui.radio_value(&mut dark, true, "Dark theme").clicked()
            {
                out.push(Command::SetDark(dark));
            }
            if ui.button("Reset window").clicked() {
                out.push(Command::ResetView);
            }
        });
        ui.menu_button("Help", |ui| {
            if ui.button("About phasewright").clicked() {
                out.push(Command::ShowAbout);
            }
        });
    });
    out
}

/// "pendulum_resonance.json" → "pendulum resonance".
pub fn example_title(file_name: &str) -> String {
    file_name.trim_end_matches(".json").replace(['_', '-'], " ")
}

/// Figures (SVG, PNG) and tables (CSV, JSON) of each view; a view the
/// panes have nothing to show for (no parameter to sweep) is greyed out.
fn export_menu(ui: &mut egui::Ui, st: &MenuState<'_>, out: &mut Vec<Command>) {
    let figures = [
        ("Figure (SVG)…", ExportFormat::Figure(FigureFormat::Svg)),
        ("Figure (PNG)…", ExportFormat::Figure(FigureFormat::Png)),
    ];
    ui.menu_button("Portrait", |ui| {
        for (label, format) in figures {
            if ui.button(label).clicked() {
                out.push(Command::Export(View::Portrait, format));
            }
        }
        ui.separator();
        for (name, table) in [
            ("Equilibria", PortraitTable::Equilibria),
            ("Wells", PortraitTable::Wells),
            ("Orbits", PortraitTable::Orbits),
            ("Orbit samples", PortraitTable::Samples),
        ] {
            for (kind, format) in [
                ("CSV", ExportFormat::Csv(table)),
                ("JSON", ExportFormat::Json(table)),
            ] {
                if ui.button(format!("{name} ({kind})…")).clicked() {
                    out.push(Command::Export(View::Portrait, format));
                }
            }
        }
    });
    let views = [
        (
            "Sweep: equilibria against a parameter",
            View::Diagram,
            st.has_sweep,
        ),
        (
            "Backbone: period against energy",
            View::Backbone(BackbonePlot::PeriodEnergy),
            true,
        ),
        (
            "Backbone: frequency against amplitude",
            View::Backbone(BackbonePlot::FrequencyAmplitude),
            true,
        ),
        ("Fold curves", View::Folds, st.has_folds),
        ("Stroboscopic section", View::Section, st.has_section),
        ("Melnikov function", View::Melnikov, st.has_melnikov),
        ("Levels", View::Levels, st.has_levels),
        ("Safe basins", View::Basin, st.has_basin),
        ("Erosion curve", View::Erosion, st.has_erosion),
    ];
    for (name, view, enabled) in views {
        ui.add_enabled_ui(enabled, |ui| {
            ui.menu_button(name, |ui| {
                for (label, format) in figures {
                    if ui.button(label).clicked() {
                        out.push(Command::Export(view, format));
                    }
                }
                ui.separator();
                let table = PortraitTable::default();
                if ui.button("Table (CSV)…").clicked() {
                    out.push(Command::Export(view, ExportFormat::Csv(table)));
                }
                if ui.button("Table (JSON)…").clicked() {
                    out.push(Command::Export(view, ExportFormat::Json(table)));
                }
            });
        });
    }
}
