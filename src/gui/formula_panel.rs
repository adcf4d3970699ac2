//! The formula editor: a multi-line monospace text field for H(q, p), the
//! compile error under it with a caret under the offending column.

use crate::core::formula::{Formula, FormulaError};
use std::sync::Arc;

use super::Command;

/// Label of the editor (also its accessible name).
pub const EDITOR_LABEL: &str = "Hamiltonian H(q, p)";

pub struct FormulaPanel {
    /// What is in the editor (may not compile).
    pub text: String,
    /// Why `text` does not compile.
    pub error: Option<FormulaError>,
}

impl FormulaPanel {
    pub fn new(text: &str) -> Self {
        FormulaPanel {
            text: text.to_string(),
            error: None,
        }
    }

    /// Replace the editor text (load, undo); the text is known to compile or is
    /// checked now.
    pub fn set_text(&mut self, text: &str) {
        self.text = text.to_string();
        self.error = Formula::compile(text).err();
    }

    pub fn ui(&mut self, ui: &mut egui::Ui) -> Option<Command> {
        let label = ui.strong(EDITOR_LABEL);
        let edit = egui::TextEdit::multiline(&mut self.text)
            .id_salt("formula-editor")
            .code_editor()
            .desired_rows(3)
            .desired_width(f32::INFINITY)
            .hint_text("e.g. p^2/2 - k*cos(q)");
        let response = ui.add(edit).labelled_by(label.id);
        let mut command = None;
        if response.changed() {
            match Formula::compile(&self.text) {
                Ok(f) => {
                    self.error = None;
                    command = Some(Command::FormulaEdited {
                        text: self.text.clone(),
                        formula: Arc::new(f),
                    });
                }
                Err(e) => self.error = Some(e),
            }
        }
        if let Some(err) = &self.error {
            error_block(ui, &self.text, err);
        } else {
            ui.small(variables_hint());
        }
        command
    }
}

/// The error message and, when the column is known, the offending line with a caret under it.
fn error_block(ui: &mut egui::Ui, text: &str, err: &FormulaError) {
    let red = ui.visuals().error_fg_color;
    ui.colored_label(red, format!("Formula error: {err}"));
    if let Some(col) = err.column {
        let line = text.lines().nth(err.line.saturating_sub(1)).unwrap_or("");
        let caret = format!("{}^", " ".repeat(col.saturating_sub(1)));
        ui.label(
            egui::RichText::new(format!("{line}\n{caret}"))
                .monospace()
                .color(red),
        );
    }
}

/// The line under the editor: the formula's variables from the one table, and
/// what any other name becomes.
fn variables_hint() -> String {
    let names: Vec<&str> = crate::core::formula::VARIABLES
        .iter()
        .map(|v| v.name)
        .collect();
    format!(
        "Variables {}; any other name becomes a parameter.",
        names.join(", ")
    )
}
