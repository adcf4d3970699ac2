//! Backbones of wells.
