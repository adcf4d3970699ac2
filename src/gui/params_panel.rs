//! Parameter rows: for each parameter a slider, its value, its range (min and
//! max) and an optional step. A range with min ≥ max is refused with a message.
//! Below them the Drive area: the drive's period and damping as expressions,
//! on or off (`drive_ui`). When the session sets ħ, the slider of the parameter
//! that is ħ says so, and ħ's expression can be edited below the rows (a bad one
//! is refused with its reason and the session keeps the old one).

use crate::numbers;
use crate::session::{DriveSettings, Parameter, Session};

use super::Command;
use super::views_panel::PaneSettings;

/// A value marked on a parameter's slider with a dashed line, and a
/// caption under it (the drive amplitude's Melnikov threshold).
#[derive(Clone, Debug, PartialEq)]
pub struct SliderMark {
    pub param: String,
    pub value: f64,
    pub caption: String,
}
/// Accessible name of the ħ expression field.
pub const HBAR_LABEL: &str = "hbar expression";

#[derive(Default)]
pub struct ParamsPanel {
    /// The last refused range edit: parameter name and the message.
    refused: Option<(String, String)>,
    /// Marks drawn on the sliders this frame (set by the explorer).
    pub marks: Vec<SliderMark>,
    /// The drive's period and damping as typed, and the drive they were
    /// last synced from (a change in the session, e.g. an undo, resets them).
    drive_text: [String; 2],
    drive_seen: Option<Option<DriveSettings>>,
    /// Why the typed drive was not taken.
    drive_problem: Option<String>,
    /// The parameter whose slider is ħ (the session's `quantum.hbar` is its name).
    pub hbar_param: Option<String>,
    /// The ħ expression being typed (None: showing the session's).
    hbar_text: Option<String>,
    /// Why the last ħ expression typed was refused.
    hbar_refused: Option<String>,
}

impl ParamsPanel {
    pub fn ui(
        &mut self,
        ui: &mut egui::Ui,
        params: &[Parameter],
        unused: &[String],
    ) -> Vec<Command> {
        let mut commands = Vec::new();
        ui.strong("Parameters");
        if params.is_empty() {
            ui.small("The formula has no parameters.");
        }
        for par in params {
            ui.separator();
            self.row(ui, par, unused.contains(&par.name), &mut commands);
        }
        commands
    }

    fn row(
        &mut self,
        ui: &mut egui::Ui,
        par: &Parameter,
        unused: bool,
        commands: &mut Vec<Command>,
    ) {
        ui.horizontal(|ui| {
            ui.label(egui::RichText::new(&par.name).monospace().strong());
            if unused {
                ui.small("(no longer in the formula; removed shortly)");
            }
            if self.hbar_param.as_deref() == Some(par.name.as_str()) {
                ui.label(egui::RichText::new("= ħ").strong())
                    .on_hover_text("This slider sets ħ for the levels (quantum.hbar)");
            }
        });
        let mut value = par.value;
        let step = par.step.filter(|s| *s > 0.0);
        ui.spacing_mut().slider_width = (ui.available_width() - 12.0).max(80.0);
        let mut slider = egui::Slider::new(&mut value, par.min..=par.max).show_value(false);
        if let Some(s) = step {
            slider = slider.step_by(s);
        }
        let r = ui
            .add(slider)
            .on_hover_text(format!("{} = {}", par.name, par.value));
        accessible_name(&r, egui::Role::Slider, &format!("{} slider", par.name));
        for m in self.marks.iter().filter(|m| m.param == par.name) {
            mark_slider(ui, &r, par, m);
        }
        // The slider snaps to its step in binary (2.3 becomes 2.3000000000000003
        // on the first frame); that is not an edit, and a dragged value is kept
        // at the step's decimals so files stay as people write them.
        let value = snap_to_step(value, step);
        let moved = (value - par.value).abs() > 1e-12 * (par.max - par.min).abs();
        if (r.changed() && moved) || r.drag_stopped() {
            commands.push(Command::SetParam {
                name: par.name.clone(),
                value,
                dragging: r.dragged(),
            });
        } else if r.dragged() {
            commands.push(Command::Dragging);
        }
        egui::Grid::new(("param-grid", &par.name))
            .num_columns(4)
            .show(ui, |ui| {
                let mut v = par.value;
                ui.label("value");
                let resp = ui.add(
                    egui::DragValue::new(&mut v)
                        .range(par.min..=par.max)
                        .speed((par.max - par.min) / 500.0)
                        .max_decimals(6),
                );
                let resp = resp.on_hover_text(format!("value of {}", par.name));
                accessible_name(
                    &resp,
                    egui::Role::SpinButton,
                    &format!("{} value", par.name),
                );
                if resp.changed() {
                    commands.push(Command::SetParam {
                        name: par.name.clone(),
                        value: v,
                        dragging: resp.dragged(),
                    });
                }
                ui.end_row();

                let mut lo = par.min;
                let mut hi = par.max;
                let mut st = par.step.unwrap_or(0.0);
                ui.label("min");
                let rl = ui.add(egui::DragValue::new(&mut lo).speed(0.01).max_decimals(6));
                accessible_name(&rl, egui::Role::SpinButton, &format!("{} min", par.name));
                ui.label("max");
                let rh = ui.add(egui::DragValue::new(&mut hi).speed(0.01).max_decimals(6));
                accessible_name(&rh, egui::Role::SpinButton, &format!("{} max", par.name));
                ui.end_row();
                ui.label("step");
                let rs = ui
                    .add(
                        egui::DragValue::new(&mut st)
                            .range(0.0..=f64::MAX)
                            .speed(0.001)
                            .max_decimals(6),
                    )
                    .on_hover_text("0 = continuous");
                accessible_name(&rs, egui::Role::SpinButton, &format!("{} step", par.name));
                ui.end_row();
                if rl.changed() || rh.changed() || rs.changed() {
                    if lo < hi && lo.is_finite() && hi.is_finite() {
                        self.refused = None;
                        commands.push(Command::SetRange {
                            name: par.name.clone(),
                            min: lo,
                            max: hi,
                            step: (st > 0.0).then_some(st),
                        });
                    } else {
                        self.refused = Some((
                            par.name.clone(),
                            format!(
                                "{}: min ({lo}) must be less than max ({hi}); range kept",
                                par.name
                            ),
                        ));
                    }
                }
            });
        if let Some((name, msg)) = &self.refused
            && name == &par.name
        {
            ui.colored_label(ui.visuals().error_fg_color, msg);
        }
    }
}

impl ParamsPanel {
    /// ħ when the session sets it: its value now and its expression, which
    /// can be edited (applied as typed whenever it is good; a bad expression
    /// is refused with the reason, stays in the field to be fixed, and the
    /// session keeps its ħ).
    pub fn quantum_ui(&mut self, ui: &mut egui::Ui, session: &Session) -> Vec<Command> {
        let mut commands = Vec::new();
        let Some(q) = &session.quantum else {
            self.hbar_text = None;
            self.hbar_refused = None;
            return commands;
        };
        ui.separator();
        ui.horizontal(|ui| {
            ui.label(egui::RichText::new("ħ").monospace().strong());
            match session.hbar() {
                Ok(Some(h)) => {
                    ui.label(format!("= {}", numbers::label(h)));
                }
                Ok(None) => {}
                Err(e) => {
                    ui.colored_label(ui.visuals().error_fg_color, e.problem);
                }
            }
        });
        let mut text = self.hbar_text.clone().unwrap_or_else(|| q.hbar.clone());
        let r = ui
            .add(
                egui::TextEdit::singleline(&mut text)
                    .desired_width(f32::INFINITY)
                    .font(egui::TextStyle::Monospace),
            )
            .on_hover_text(
                "ħ for the Bohr–Sommerfeld levels: a number or an expression over the \
                 parameters, e.g. 0.1, h or 0.05*sqrt(k)",
            );
        accessible_name(&r, egui::Role::TextInput, HBAR_LABEL);
        if r.changed() {
            let mut trial = session.clone();
            if let Some(t) = trial.quantum.as_mut() {
                t.hbar = text.trim().to_string();
            }
            match trial.hbar() {
                Ok(_) => {
                    self.hbar_refused = None;
                    if trial.quantum != session.quantum {
                        let mut settings = PaneSettings::of(session);
                        settings.quantum = trial.quantum;
                        commands.push(Command::SetPanes {
                            settings,
                            dragging: false,
                        });
                    }
                }
                Err(e) => {
                    self.hbar_refused = Some(format!(
                        "ħ = `{}` refused: {}; ħ stays `{}`",
                        text.trim(),
                        e.problem,
                        q.hbar
                    ));
                }
            }
            self.hbar_text = Some(text);
        } else if !r.has_focus() && self.hbar_refused.is_none() {
            // Typed and accepted: show the session's expression again (undo may change it).
            self.hbar_text = None;
        }
        if let Some(msg) = &self.hbar_refused {
            ui.colored_label(ui.visuals().error_fg_color, msg);
        } else if let Some(name) = &self.hbar_param {
            ui.small(format!("the {name} slider above sets ħ"));
        }
        commands
    }
}

/// Give a widget an accessible name (used by assistive tools and the GUI tests).
pub fn accessible_name(response: &egui::Response, kind: egui::Role, name: &str) {
    let enabled = response.enabled();
    let name = name.to_string();
    response.widget_info(move || egui::WidgetInfo::labeled(kind, enabled, name.clone()));
}

/// `value` written with as many decimals as `step` has (a step of 0.01 gives
/// two), so a slider step of 0.01 yields 2.3 rather than 2.3000000000000003.
pub fn snap_to_step(value: f64, step: Option<f64>) -> f64 {
    let Some(step) = step.filter(|s| *s > 0.0 && s.is_finite()) else {
        return value;
    };
    // The fewest decimals that write the step itself exactly (0.25 needs two).
    let decimals = (0..=15usize)
        .find(|&d| {
            let scaled = step * 10f64.powi(d as i32);
            (scaled - scaled.round()).abs() <= 1e-9 * scaled.max(1.0)
        })
        .unwrap_or(15);
    let text = format!("{value:.decimals$}");
    text.parse().unwrap_or(value)
}

/// A dashed line across the slider `r` of `par` at the mark's value (when
/// it lies in the slider's range) and the mark's caption under the slider.
fn mark_slider(ui: &mut egui::Ui, r: &egui::Response, par: &Parameter, m: &SliderMark) {
    let span = par.max - par.min;
    if span > 0.0 && m.value >= par.min && m.value <= par.max {
        let rect = r.rect;
        // the slider's rail runs between its handle's half-widths
        let inset = rect.height() / 2.0;
        let t = ((m.value - par.min) / span) as f32;
        let x = rect.left() + inset + t * (rect.width() - 2.0 * inset);
        let stroke = egui::Stroke::new(2.0, ui.visuals().warn_fg_color);
        ui.painter().extend(egui::Shape::dashed_line(
            &[
                egui::pos2(x, rect.top() - 2.0),
                egui::pos2(x, rect.bottom() + 2.0),
            ],
            stroke,
            3.0,
            2.0,
        ));
    }
    ui.small(egui::RichText::new(&m.caption).color(ui.visuals().warn_fg_color));
}

impl ParamsPanel {
    /// The Drive area: on or off, the period and the damping as
    /// expressions over the parameters. An edit that evaluates is a session
    /// edit (undoable); one that does not is kept in its field with the
    /// message in place, and the session keeps its drive.
    pub fn drive_ui(&mut self, ui: &mut egui::Ui, session: &Session) -> Vec<Command> {
        let mut commands = Vec::new();
        if self.drive_seen.as_ref() != Some(&session.drive) {
            self.drive_text = match &session.drive {
                Some(d) => [d.period.clone(), d.damping.clone().unwrap_or_default()],
                None => [String::new(), String::new()],
            };
            self.drive_seen = Some(session.drive.clone());
            self.drive_problem = None;
        }
        ui.separator();
        ui.strong("Drive");
        let Some(current) = &session.drive else {
            ui.small("None: H is analysed as written, time frozen at t = 0.");
            let r = ui.button("Add a drive");
            accessible_name(&r, egui::Role::Button, "Add a drive");
            if r.clicked() {
                commands.push(Command::SetDrive {
                    drive: Some(DriveSettings {
                        period: "2*pi".to_string(),
                        enabled: true,
                        ..DriveSettings::default()
                    }),
                    typing: false,
                });
            }
            return commands;
        };
        let mut on = current.enabled;
        let r = ui.checkbox(&mut on, "drive on");
        accessible_name(&r, egui::Role::CheckBox, "drive on");
        if r.changed() {
            commands.push(Command::SetDrive {
                drive: Some(DriveSettings {
                    enabled: on,
                    ..current.clone()
                }),
                typing: false,
            });
        }
        let mut typed = false;
        egui::Grid::new("drive-grid").num_columns(2).show(ui, |ui| {
            for (k, (label, hint)) in [("period", "e.g. 2*pi/W"), ("damping", "none")]
                .into_iter()
                .enumerate()
            {
                ui.label(label);
                let r = ui.add(
                    egui::TextEdit::singleline(&mut self.drive_text[k])
                        .hint_text(hint)
                        .desired_width(f32::INFINITY)
                        .font(egui::TextStyle::Monospace),
                );
                accessible_name(&r, egui::Role::TextInput, &format!("drive {label}"));
                typed |= r.changed();
                ui.end_row();
            }
        });
        if typed {
            let damping = self.drive_text[1].trim();
            let candidate = DriveSettings {
                period: self.drive_text[0].clone(),
                damping: (!damping.is_empty()).then(|| self.drive_text[1].clone()),
                ..current.clone()
            };
            let mut trial = session.clone();
            trial.drive = Some(candidate.clone());
            let checked = if candidate.period.trim().is_empty() {
                Err("drive.period: is empty; give the drive period, e.g. \"2*pi/W\"".to_string())
            } else {
                // a drive switched off is checked as if it were on
                if let Some(d) = trial.drive.as_mut() {
                    d.enabled = true;
                }
                trial.drive().map(|_| ()).map_err(|e| e.to_string())
            };
            match checked {
                Ok(()) => {
                    self.drive_problem = None;
                    commands.push(Command::SetDrive {
                        drive: Some(candidate),
                        typing: true,
                    });
                }
                Err(e) => self.drive_problem = Some(format!("{e}; the drive is kept as it was")),
            }
        }
        if let Some(problem) = &self.drive_problem {
            ui.colored_label(ui.visuals().error_fg_color, problem);
        } else if let Ok(Some(d)) = session.drive() {
            ui.small(format!(
                "period {}, damping {}{}",
                crate::numbers::caption(d.period),
                crate::numbers::caption(d.damping),
                d.amplitude
                    .as_ref()
                    .map_or(String::new(), |a| format!(", amplitude {a}"))
            ));
        }
        let r = ui.small_button("Remove the drive");
        accessible_name(&r, egui::Role::Button, "Remove the drive");
        if r.clicked() {
            commands.push(Command::SetDrive {
                drive: None,
                typing: false,
            });
        }
        commands
    }
}
