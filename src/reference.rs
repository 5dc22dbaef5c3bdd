//! Matching computed modes against a reference list, for tests and the
//! validation runner.
//!
//! Each reference mode takes the nearest unused computed frequency within a
//! relative tolerance; computed modes left over are reported as unmatched
//! (spurious, if the reference list is complete).
use lathe_solver::Mode;

/// The isolated benchmark cylinder: ε_r 38, radius 5.25 mm, height 4.6 mm.
/// Resonances computed by surface integral equations in Kajfez, Glisson &
/// James, IEEE T-MTT 32(12), 1984. Values recalled from memory (the table
/// itself was not re-read): (label, f in GHz, Q).
pub const BENCHMARK_CYLINDER: [(&str, f64, f64); 5] = [
    ("TE01δ", 4.829, 45.8),
    ("HEM11δ", 6.333, 30.7),
    ("HEM12δ", 6.638, 52.1),
    ("TM01δ", 7.524, 76.8),
    ("HEM21δ", 7.752, 327.0),
];

/// One reference mode and what it was matched with.
#[derive(Debug, Clone, PartialEq)]
pub struct Matched {
    /// The reference's name (e.g. `TE011`).
    pub label: String,
    /// Reference frequency, Hz.
    pub reference_hz: f64,
    /// The matched computed mode, if any.
    pub computed: Option<Mode>,
}

impl Matched {
    /// Relative frequency error (computed − reference)/reference.
    pub fn rel_error(&self) -> Option<f64> {
        self.computed
            .as_ref()
            .map(|m| m.freq_hz / self.reference_hz - 1.0)
    }
}

/// Matches `computed` (one order) against `reference` (label, Hz), closest
/// pairs first, each side used once, accepting pairs within `tol` relative.
/// Returns the reference list with its matches, and the unmatched computed
/// modes.
pub fn match_modes(
    computed: &[Mode],
    reference: &[(String, f64)],
    tol: f64,
) -> (Vec<Matched>, Vec<Mode>) {
    let mut pairs: Vec<(f64, usize, usize)> = Vec::new();
    for (a, (_, f)) in reference.iter().enumerate() {
        for (b, m) in computed.iter().enumerate() {
            let d = (m.freq_hz / f - 1.0).abs();
            if d <= tol {
                pairs.push((d, a, b));
            }
        }
    }
    pairs.sort_by(|x, y| x.0.total_cmp(&y.0));
    let mut ref_used = vec![None; reference.len()];
    let mut comp_used = vec![false; computed.len()];
    for (_, a, b) in pairs {
        if ref_used[a].is_none() && !comp_used[b] {
            ref_used[a] = Some(b);
            comp_used[b] = true;
        }
    }
    let matched = reference
        .iter()
        .zip(&ref_used)
        .map(|((label, f), u)| Matched {
            label: label.clone(),
            reference_hz: *f,
            computed: u.map(|b| computed[b].clone()),
        })
        .collect();
    let unmatched = computed
        .iter()
        .zip(&comp_used)
        .filter(|(_, &u)| !u)
        .map(|(m, _)| m.clone())
        .collect();
    (matched, unmatched)
}
