//! One check shared by the formula property tests: the fast row evaluator
//! (`RowProgram`) gives what the tape gives, wherever the tape is finite.

use phasewright::core::system::System;

/// `RowProgram::eval_row` at a few points agrees with `System::energy` to
/// 1e-12 relative (or both are NaN); `src` names the formula in the message.
pub fn row_matches_tape(s: &System, src: &str) {
    let row = s.row_program();
    let qs = [-1.0, 0.0, 0.5, 2.0];
    let mut out = [0.0; 4];
    row.eval_row(&qs, 0.25, &mut out);
    for (i, &q) in qs.iter().enumerate() {
        let want = s.energy(q, 0.25);
        let same = (out[i] - want).abs() <= 1e-12 * (1.0 + want.abs())
            || (out[i].is_nan() && want.is_nan());
        assert!(
            same || !want.is_finite(),
            "{src:?} at q = {q}: row {} vs tape {want}",
            out[i]
        );
    }
}
