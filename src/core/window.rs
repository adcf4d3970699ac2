//! The rectangle of phase space that an analysis looks at.

use std::fmt;

/// A window [qmin, qmax] × [pmin, pmax] in phase space.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Window {
    pub qmin: f64,
    pub qmax: f64,
    pub pmin: f64,
    pub pmax: f64,
}

/// Why a window was refused.
#[derive(Clone, Debug, PartialEq)]
pub struct WindowError(pub String);

impl fmt::Display for WindowError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for WindowError {}

impl Window {
    /// A checked window: all bounds finite and min < max on both axes.
    pub fn new(qmin: f64, qmax: f64, pmin: f64, pmax: f64) -> Result<Self, WindowError> {
        let w = Window {
            qmin,
            qmax,
            pmin,
            pmax,
        };
        w.validate()?;
        Ok(w)
    }

    /// Check an existing window (for instance one read from a file).
    pub fn validate(&self) -> Result<(), WindowError> {
        for (name, v) in [
            ("qmin", self.qmin),
            ("qmax", self.qmax),
            ("pmin", self.pmin),
            ("pmax", self.pmax),
        ] {
            if !v.is_finite() {
                return Err(WindowError(format!("{name} is not a finite number ({v})")));
            }
        }
        if self.qmin >= self.qmax {
            return Err(WindowError(format!(
                "qmin ({}) must be less than qmax ({})",
                self.qmin, self.qmax
            )));
        }
        if self.pmin >= self.pmax {
            return Err(WindowError(format!(
                "pmin ({}) must be less than pmax ({})",
                self.pmin, self.pmax
            )));
        }
        let span = (self.qmax - self.qmin).min(self.pmax - self.pmin);
        let mag = self
            .qmin
            .abs()
            .max(self.qmax.abs())
            .max(self.pmin.abs())
            .max(self.pmax.abs());
        if span <= mag * 1e-12 {
            return Err(WindowError(format!(
                "window is too narrow to resolve ({span:e} wide at magnitude {mag:e})"
            )));
        }
        Ok(())
    }

    pub fn width(&self) -> f64 {
        self.qmax - self.qmin
    }

    pub fn height(&self) -> f64 {
        self.pmax - self.pmin
    }

    /// The diagonal length, the natural length scale of the window.
    pub fn diagonal(&self) -> f64 {
        self.width().hypot(self.height())
    }

    pub fn contains(&self, q: f64, p: f64) -> bool {
        q >= self.qmin && q <= self.qmax && p >= self.pmin && p <= self.pmax
    }

    /// The window grown by `factor` about its centre (factor 1 is the window itself).
    pub fn scaled(&self, factor: f64) -> Window {
        let cq = 0.5 * (self.qmin + self.qmax);
        let cp = 0.5 * (self.pmin + self.pmax);
        let hq = 0.5 * self.width() * factor;
        let hp = 0.5 * self.height() * factor;
        Window {
            qmin: cq - hq,
            qmax: cq + hq,
            pmin: cp - hp,
            pmax: cp + hp,
        }
    }
}

impl Default for Window {
    fn default() -> Self {
        Window {
            qmin: -2.0,
            qmax: 2.0,
            pmin: -1.5,
            pmax: 1.5,
        }
    }
}
