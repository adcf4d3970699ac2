//! The bar along the top: session files, examples, edit history, view options, about.

use std::path::PathBuf;

use super::files::EXAMPLES;
use super::{Command, Guarded};

pub struct MenuState<'a> {
    pub recent: &'a [PathBuf],
    pub can_undo: bool,
    pub can_redo: bool,
    pub dark: bool,
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
        ui.menu_button("Examples", |ui| {
            if EXAMPLES.is_empty() {
                if ui.button("Double well (built in)").clicked() {
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
            if ui.button("Reset view").clicked() {
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
