//! Two-parameter fold curves.
