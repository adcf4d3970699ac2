//! Small in-app windows: about, "discard unsaved changes?", the path prompt
//! used when no native file dialog is available, the crash-recovery offer,
//! and messages (a file that did not load).

use std::path::PathBuf;

use super::files::DialogPurpose;
use super::{Command, Guarded};

/// The caution shown in the about box.
pub const CAUTION: &str = "Models here are conservative idealisations: no damping, no imperfections beyond those \
written into H, no safety factors. Engineering decisions defer to local codes and licensed practice.";

/// Which modal is open (at most one).
#[derive(Clone, Debug, PartialEq)]
pub enum Modal {
    None,
    About,
    ConfirmDiscard(Guarded),
    PathPrompt {
        purpose: DialogPurpose,
        text: String,
        note: String,
    },
    /// Saving would write over a shipped example: ask first.
    ConfirmOverwrite(PathBuf),
    OfferRestore,
    Message {
        title: String,
        text: String,
    },
}

pub fn ui(ctx: &egui::Context, modal: &mut Modal, has_file: bool) -> Vec<Command> {
    let mut out = Vec::new();
    let mut close = false;
    match modal {
        Modal::None => {}
        Modal::About => {
            let r = egui::Modal::new(egui::Id::unique("about")).show(ctx, |ui| {
                ui.set_max_width(420.0);
                ui.heading("phasewright");
                ui.label(format!("version {}", env!("CARGO_PKG_VERSION")));
                ui.label("A workbench for conservative one-degree-of-freedom Hamiltonian systems H(q, p).");
                ui.separator();
                ui.label(egui::RichText::new(CAUTION).italics());
                ui.separator();
                ui.button("Close").clicked()
            });
            close = r.inner || r.should_close();
        }
        Modal::ConfirmDiscard(action) => {
            let action = action.clone();
            let r = egui::Modal::new(egui::Id::unique("confirm-discard")).show(ctx, |ui| {
                ui.heading("Unsaved changes");
                ui.label(format!(
                    "The session has changes that are not saved. {} anyway?",
                    action.verb()
                ));
                let mut done = false;
                ui.horizontal(|ui| {
                    if has_file && ui.button("Save, then continue").clicked() {
                        out.push(Command::Save);
                        out.push(Command::Confirmed(action.clone()));
                        done = true;
                    }
                    if ui.button("Discard changes").clicked() {
                        out.push(Command::Confirmed(action.clone()));
                        done = true;
                    }
                    if ui.button("Cancel").clicked() {
                        done = true;
                    }
                });
                done
            });
            close = r.inner || r.should_close();
        }
        Modal::PathPrompt {
            purpose,
            text,
            note,
        } => {
            let purpose = *purpose;
            let r = egui::Modal::new(egui::Id::unique("path-prompt")).show(ctx, |ui| {
                ui.set_min_width(420.0);
                ui.heading(match purpose {
                    DialogPurpose::Open => "Open a session file",
                    DialogPurpose::SaveAs => "Save the session as",
                    DialogPurpose::Export(..) => "Export to",
                });
                if !note.is_empty() {
                    ui.small(note.as_str());
                }
                let label = ui.label("Path");
                let edit = ui
                    .add(egui::TextEdit::singleline(text).desired_width(400.0))
                    .labelled_by(label.id);
                let enter = edit.lost_focus() && ui.input(|i| i.key_pressed(egui::Key::Enter));
                let mut done = false;
                ui.horizontal(|ui| {
                    let ok = ui
                        .button(match purpose {
                            DialogPurpose::Open => "Open",
                            DialogPurpose::SaveAs => "Save",
                            DialogPurpose::Export(..) => "Export",
                        })
                        .clicked();
                    if (ok || enter) && !text.trim().is_empty() {
                        let path = PathBuf::from(text.trim());
                        out.push(match purpose {
                            DialogPurpose::Open => Command::OpenFile(path),
                            DialogPurpose::SaveAs => Command::SaveTo(path),
                            DialogPurpose::Export(view, format) => {
                                Command::ExportTo(view, format, path)
                            }
                        });
                        done = true;
                    }
                    if ui.button("Cancel").clicked() {
                        done = true;
                    }
                });
                done
            });
            close = r.inner || r.should_close();
        }
        Modal::ConfirmOverwrite(path) => {
            let path = path.clone();
            let r = egui::Modal::new(egui::Id::unique("confirm-overwrite")).show(ctx, |ui| {
                ui.set_max_width(480.0);
                ui.heading("Overwrite a shipped example?");
                ui.label(format!(
                    "{} is one of the examples that come with phasewright. Write this session over it?",
                    path.display()
                ));
                let mut done = false;
                ui.horizontal(|ui| {
                    if ui.button("Overwrite the example").clicked() {
                        out.push(Command::OverwriteExample(path.clone()));
                        done = true;
                    }
                    if ui.button("Save as a new file…").clicked() {
                        out.push(Command::SaveAs);
                        done = true;
                    }
                    if ui.button("Cancel").clicked() {
                        done = true;
                    }
                });
                done
            });
            close = r.inner || r.should_close();
        }
        Modal::OfferRestore => {
            let r = egui::Modal::new(egui::Id::unique("offer-restore")).show(ctx, |ui| {
                ui.heading("Recover unsaved work?");
                ui.label("phasewright did not close normally last time. A copy of the unsaved session was kept.");
                let mut done = false;
                ui.horizontal(|ui| {
                    if ui.button("Restore it").clicked() {
                        out.push(Command::RestoreRecovery);
                        done = true;
                    }
                    if ui.button("Discard it").clicked() {
                        out.push(Command::DiscardRecovery);
                        done = true;
                    }
                });
                done
            });
            close = r.inner;
        }
        Modal::Message { title, text } => {
            let r = egui::Modal::new(egui::Id::unique("message")).show(ctx, |ui| {
                ui.set_max_width(480.0);
                ui.heading(title.as_str());
                ui.label(text.as_str());
                ui.button("OK").clicked()
            });
            close = r.inner || r.should_close();
        }
    }
    if close {
        *modal = Modal::None;
    }
    out
}
