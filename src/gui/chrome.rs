//! The chrome around the panels: the status line, the modal window and a
//! pending system file dialog, the bifurcation announcement, the theme, the
//! window title, quitting, and the frame log.

use super::FRAME_LOG_ENV;
use super::dialogs::Modal;
use super::files::PendingDialog;
use std::time::Instant;

/// A crossed bifurcation is named on the portrait this long at full strength (s)…
pub(super) const ANNOUNCE_HOLD_SECONDS: f64 = 2.5;
/// …then fades out over this long (s).
const ANNOUNCE_FADE_SECONDS: f64 = 1.5;

pub(super) struct Chrome {
    /// The last message shown in the status line.
    pub(super) status: String,
    pub(super) modal: Modal,
    pub(super) pending_dialog: Option<PendingDialog>,
    /// A bifurcation the last parameter move crossed, and when.
    pub(super) announcement: Option<(String, f64)>,
    pub(super) dark: bool,
    theme_applied: Option<bool>,
    title_sent: String,
    /// Use native file dialogs (else always the in-app path prompt).
    pub(super) native_dialogs: bool,
    /// Quit went through: the window may close.
    pub(super) allow_close: bool,
    quit_requested: bool,
    frame_log: Option<std::fs::File>,
    last_frame: Option<Instant>,
}

impl Chrome {
    /// The chrome at start; `offer_restore` opens the recovery offer.
    pub(super) fn new(offer_restore: bool) -> Self {
        let frame_log = std::env::var_os(FRAME_LOG_ENV)
            .filter(|p| !p.is_empty())
            .and_then(|p| {
                std::fs::OpenOptions::new()
                    .create(true)
                    .append(true)
                    .open(p)
                    .ok()
            });
        Chrome {
            status: String::new(),
            modal: if offer_restore {
                Modal::OfferRestore
            } else {
                Modal::None
            },
            pending_dialog: None,
            announcement: None,
            dark: false,
            theme_applied: None,
            title_sent: String::new(),
            native_dialogs: true,
            allow_close: false,
            quit_requested: false,
            frame_log,
            last_frame: None,
        }
    }

    /// The modal window open now, by name (for tests).
    pub(super) fn modal_name(&self) -> &'static str {
        match self.modal {
            Modal::None => "",
            Modal::About => "about",
            Modal::ConfirmDiscard(_) => "confirm-discard",
            Modal::PathPrompt { .. } => "path-prompt",
            Modal::ConfirmOverwrite(_) => "confirm-overwrite",
            Modal::OfferRestore => "offer-restore",
            Modal::Message { .. } => "message",
        }
    }

    /// Show a message in a modal window.
    pub(super) fn message(&mut self, title: impl Into<String>, text: impl Into<String>) {
        self.modal = Modal::Message {
            title: title.into(),
            text: text.into(),
        };
    }

    /// Opacity of the announcement at `now` (None once it has faded).
    pub(super) fn announcement_strength(&self, now: f64) -> Option<f32> {
        let (_, at) = self.announcement.as_ref()?;
        let age = now - at;
        if age < ANNOUNCE_HOLD_SECONDS {
            Some(1.0)
        } else if age < ANNOUNCE_HOLD_SECONDS + ANNOUNCE_FADE_SECONDS {
            Some((1.0 - (age - ANNOUNCE_HOLD_SECONDS) / ANNOUNCE_FADE_SECONDS) as f32)
        } else {
            None
        }
    }

    /// Switch egui's theme when the choice changed.
    pub(super) fn apply_theme(&mut self, ctx: &egui::Context) {
        if self.theme_applied != Some(self.dark) {
            ctx.set_theme(if self.dark {
                egui::Theme::Dark
            } else {
                egui::Theme::Light
            });
            self.theme_applied = Some(self.dark);
        }
    }

    /// Quit: the window may close, and is asked to at the end of the frame.
    pub(super) fn quit(&mut self) {
        self.allow_close = true;
        self.quit_requested = true;
    }

    /// Send the title when it changed, and the close request after Quit.
    pub(super) fn update_title(&mut self, ctx: &egui::Context, title: String) {
        if title != self.title_sent {
            ctx.send_viewport_cmd(egui::ViewportCommand::Title(title.clone()));
            self.title_sent = title;
        }
        if self.quit_requested {
            self.quit_requested = false;
            ctx.send_viewport_cmd(egui::ViewportCommand::Close);
        }
    }

    /// One line per frame in the frame log, if one is kept: UI time, time
    /// since the previous frame, the drag state and the shown job's time.
    pub(super) fn log_frame(&mut self, t0: Instant, dragging: bool, job: String) {
        let now = Instant::now();
        if let Some(f) = &mut self.frame_log {
            use std::io::Write;
            let ui_ms = (now - t0).as_secs_f64() * 1e3;
            let gap_ms = self
                .last_frame
                .map_or(0.0, |l| (t0 - l).as_secs_f64() * 1e3);
            let _ = writeln!(
                f,
                "ui_ms={ui_ms:.3} since_last_ms={gap_ms:.3} dragging={dragging}{job}"
            );
        }
        self.last_frame = Some(t0);
    }
}
