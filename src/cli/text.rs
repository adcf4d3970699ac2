//! Plain-text output shared by the subcommands: numbers in tables, aligned
//! columns and diagnostics.

use super::*;
pub(super) use crate::numbers::{complex, table as num};

/// Left-aligned columns, two spaces apart.
pub(super) fn table(out: &mut String, header: &[&str], rows: &[Vec<String>]) {
    let mut width: Vec<usize> = header.iter().map(|h| h.chars().count()).collect();
    for row in rows {
        for (w, cell) in width.iter_mut().zip(row) {
            *w = (*w).max(cell.chars().count());
        }
    }
    let line = |out: &mut String, cells: Vec<&str>| {
        let mut s = String::from(" ");
        for (cell, w) in cells.iter().zip(&width) {
            s.push(' ');
            s.push_str(cell);
            s.extend(std::iter::repeat_n(' ', w + 1 - cell.chars().count()));
        }
        let _ = writeln!(out, "{}", s.trim_end());
    };
    line(out, header.to_vec());
    for row in rows {
        line(out, row.iter().map(String::as_str).collect());
    }
}

pub(super) fn diagnostics_text(
    out: &mut String,
    diagnostics: &[crate::core::Diagnostic],
    cancelled: bool,
) {
    if !diagnostics.is_empty() || cancelled {
        let _ = writeln!(out, "\nDiagnostics");
        for d in diagnostics {
            let _ = writeln!(out, "  {:?}: {}", d.severity, d.message);
        }
        if cancelled {
            let _ = writeln!(out, "  the work was stopped early; results are partial");
        }
    }
}
