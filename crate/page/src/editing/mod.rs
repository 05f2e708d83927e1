//! Direct editing of the requested closed-loop poles, and side-by-side comparison of two
//! designs. Pure data and rules: no browser, no drawing; the page wires pointer and key
//! events to these functions and re-runs the design when the pole list changes.
//!
//! # The pole list being edited ([`PoleSet`])
//!
//! The requested closed-loop poles are held as an ordered list of *entries*
//! ([`PoleEntry`]): a real pole, or a conjugate pair stored once by its upper member
//! (`re + j·im` with `im > 0`; the lower member `re − j·im` is implied). Conjugate
//! symmetry therefore holds by construction, whatever edits are made. An entry index
//! (0-based) names an entry, not a pole: a pair is one entry and two poles.
//! [`PoleSet::from_poles`] pairs a plain list the way [`check_conjugate_pairs`] does
//! (an unpaired complex pole is an error); [`PoleSet::poles`] gives the list back, each
//! pair as upper then lower member, in entry order.
//!
//! # Edits ([`Edit`], [`PoleSet::edited`])
//!
//! - **Move** an entry: a pair moves as a whole (its conjugate follows); a target with a
//!   negative imaginary part is reflected into the upper half-plane, so dragging either
//!   member works. A pair cannot be moved onto the real axis (imaginary part exactly zero;
//!   [`EditError::PairOnRealAxis`]): merge it into two real poles instead. A real pole stays
//!   real: the imaginary part of its target is dropped.
//! - **Add** a pole: a real value adds one real pole, a complex value adds a pair (two
//!   poles). **Remove** an entry removes one or two poles. **Replace** swaps the whole list
//!   (as typed in the text box).
//! - **SplitReal** turns two real poles into one pair and **MergePair** a pair into two
//!   real poles, so the number of poles is kept when a pair is born or dies.
//! - Every target must be finite ([`EditError::NotFinite`]); a refused edit changes nothing.
//!   Whether the resulting number of poles suits the plant is for the caller to check.
//!
//! Entry indices after an edit: Remove shifts the later entries down by one; SplitReal puts
//! the pair at the lower of its two indices and removes the higher one; MergePair puts the
//! two real poles at the pair's index and the next one; Add appends at the end.
//!
//! # Closeness to the real axis (choice)
//!
//! Edits made from the map ([`drag_edit`], [`nudge`]) never bring a pair closer to the real
//! axis than [`EditParams::pair_axis_clearance`] times the frame's larger data span (default
//! 0.5 %): the pair stays a pair, held at that minimum imaginary part, rather than snapping
//! onto the axis or refusing the drag. Turning a pair into real poles is always the explicit
//! MergePair edit. [`PoleSet::edited`] itself knows no frame and only refuses an imaginary
//! part of exactly zero.
//!
//! # History ([`EditHistory`])
//!
//! The history owns the current pole list. [`EditHistory::apply`] records the previous list
//! as one undo step; an edit that leaves the list unchanged records nothing; a new step
//! clears the redo list; at most [`EditParams::history_limit`] steps (default 200) are kept,
//! the oldest dropped first. A pointer drag is one step: [`EditHistory::begin_drag`], any
//! number of [`EditHistory::drag_to`] / [`EditHistory::drag_to_pixel`] (the list changes
//! live, nothing recorded), then [`EditHistory::end_drag`] (one step, if anything moved) or
//! [`EditHistory::cancel_drag`] (back to where the drag began). Applying an edit, undoing or
//! redoing during a drag first ends the drag. Each keyboard nudge is its own step.
//!
//! # Keyboard ([`nudge`]) and pointer ([`drag_edit`], [`PoleSet::hit`])
//!
//! A nudge moves an entry by [`EditParams::nudge_fraction`] (default 1 %) or
//! [`EditParams::large_nudge_fraction`] (default 10 %) of the frame's larger data span, the
//! same data distance in both directions (pole maps have equal scale on both axes, so it is
//! also the same number of pixels). Left/Right change the real part; Up/Down change the
//! imaginary part of a pair's upper member (Down stops at the axis clearance). Up/Down on a
//! real pole does nothing and says why ([`NoChangeReason::RealPoleStaysOnAxis`]); splitting
//! is not started from the keyboard. For a focused lower member, [`Direction::for_member`]
//! swaps Up and Down so the marker moves the way the arrow points.
//!
//! Hit-testing uses [`plot::hit_test`](crate::plot::hit_test) on every marker of the set
//! (both members of a pair; each names the same entry) in the given frame.
//!
//! # Comparison ([`DesignSummary`], [`compare`])
//!
//! A summary keeps the figures of merit of one design run; [`compare`] lines up a pinned and
//! the current summary figure by figure. Lower is better for every figure. A figure may be
//! missing: a response that has not settled within the simulated time
//! ([`Figure::NotSettled`]; worse than any settled value) or a figure that does not exist
//! for that design ([`Figure::NotAvailable`]; never better or worse than anything).

use std::collections::VecDeque;
use std::fmt;

use serde::Serialize;

use crate::design::{fmt_num, DesignResult, Pair};
use crate::plot::{hit_test, Frame, HIT_RADIUS_PX};
use crate::poles::{check_conjugate_pairs, format_pole_list, Complex64, PoleError};

mod comparison;
mod history;
mod keys;
pub use comparison::*;
pub use history::*;
pub use keys::*;

/// Relative tolerance for matching a pole with its conjugate: the same rule and value as
/// [`check_conjugate_pairs`] uses, so that every list it accepts pairs up here.
const CONJUGATE_TOLERANCE: f64 = 1e-12;

// ---------------------------------------------------------------------------
// Parameters
// ---------------------------------------------------------------------------

/// Tuning of editing from the pole map.
#[derive(Debug, Clone, PartialEq)]
pub struct EditParams {
    /// Most undo steps kept; the oldest is dropped beyond it. Default 200; 0 keeps none.
    pub history_limit: usize,
    /// Keyboard step as a fraction of the frame's larger data span. Default 0.01 (1 %).
    pub nudge_fraction: f64,
    /// The larger keyboard step (e.g. with Shift), same unit. Default 0.1 (10 %).
    pub large_nudge_fraction: f64,
    /// Smallest imaginary part a pair is given by a drag or nudge, as a fraction of the
    /// frame's larger data span. Default 0.005 (0.5 %). Non-finite or negative counts as 0.
    pub pair_axis_clearance: f64,
    /// Pointer hit radius in CSS pixels. Default [`HIT_RADIUS_PX`] (8).
    pub hit_radius_px: f64,
}

impl Default for EditParams {
    fn default() -> Self {
        EditParams { history_limit: 200, nudge_fraction: 0.01, large_nudge_fraction: 0.1, pair_axis_clearance: 0.005, hit_radius_px: HIT_RADIUS_PX }
    }
}

/// Tuning of design comparison.
#[derive(Debug, Clone, PartialEq)]
pub struct ComparisonParams {
    /// Two finite values within this relative difference (of the larger magnitude) count as
    /// the same. Default 1e-9 (floating-point noise, not a judgement of what matters).
    pub equal_within: f64,
}

impl Default for ComparisonParams {
    fn default() -> Self {
        ComparisonParams { equal_within: 1e-9 }
    }
}

// ---------------------------------------------------------------------------
// Errors
// ---------------------------------------------------------------------------

/// Why an edit was refused. A refused edit changes nothing.
#[derive(Debug, Clone, PartialEq)]
pub enum EditError {
    /// Entry `entry` (0-based) does not exist; the list has `entries` entries.
    NoSuchEntry { entry: usize, entries: usize },
    /// A target position has a NaN or infinite part.
    NotFinite,
    /// A conjugate pair was given an imaginary part of exactly zero.
    PairOnRealAxis,
    /// The entry must be a real pole (for a split) but is a pair.
    NotReal { entry: usize },
    /// The entry must be a conjugate pair (for a merge) but is a real pole.
    NotPair { entry: usize },
    /// A split named the same real pole twice.
    SameEntry { entry: usize },
    /// A replacement list is not a valid pole list.
    Poles(PoleError),
    /// `drag_to` without `begin_drag`.
    NoDrag,
    /// The frame has no usable data span (zero or not finite).
    UnusableFrame,
    /// A real s-plane pole was moved to `z ≤ 0` on a z-plane map: no real `s` gives that
    /// `z = e^{sT}`.
    NoRealEquivalent { z: f64 },
}

impl fmt::Display for EditError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            EditError::NoSuchEntry { entry, entries } => write!(f, "there is no pole entry {} (the list has {entries}); choose a pole on the map", entry.saturating_add(1)),
            EditError::NotFinite => write!(f, "the new position is not a finite number; the pole was left where it was"),
            EditError::PairOnRealAxis => write!(
                f,
                "a conjugate pair cannot sit on the real axis; merge it into two real poles \
                 instead"
            ),
            EditError::NotReal { entry } => write!(f, "pole entry {} is a conjugate pair; only two real poles can be split into a pair", entry.saturating_add(1)),
            EditError::NotPair { entry } => write!(
                f,
                "pole entry {} is a real pole; only a conjugate pair can be merged into two \
                 real poles",
                entry.saturating_add(1)
            ),
            EditError::SameEntry { entry } => write!(f, "pole entry {} was named twice; a pair is made from two different real poles", entry.saturating_add(1)),
            EditError::Poles(inner) => inner.fmt(f),
            EditError::NoDrag => write!(f, "no pole is being dragged"),
            EditError::UnusableFrame => write!(f, "the pole map has no usable scale; resize or redraw it and try again"),
            EditError::NoRealEquivalent { z } => write!(
                f,
                "a real s-plane pole maps to a positive real z = e^(sT); z = {z} has no real \
                 s-plane equivalent, so the pole stays right of the origin"
            ),
        }
    }
}

impl std::error::Error for EditError {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        match self {
            EditError::Poles(inner) => Some(inner),
            _ => None,
        }
    }
}

// ---------------------------------------------------------------------------
// Pole set
// ---------------------------------------------------------------------------

/// One entry of a [`PoleSet`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum PoleEntry {
    /// A real pole at `re`.
    Real { re: f64 },
    /// The pair `re ± j·im`, with `im > 0`.
    Pair { re: f64, im: f64 },
}

impl PoleEntry {
    /// Number of poles: 1 or 2.
    pub fn pole_count(&self) -> usize {
        match self {
            PoleEntry::Real { .. } => 1,
            PoleEntry::Pair { .. } => 2,
        }
    }

    /// The real pole, or the upper member of the pair.
    pub fn upper(&self) -> Complex64 {
        match *self {
            PoleEntry::Real { re } => Complex64::new(re, 0.0),
            PoleEntry::Pair { re, im } => Complex64::new(re, im),
        }
    }

    /// Real part.
    pub fn re(&self) -> f64 {
        match *self {
            PoleEntry::Real { re } | PoleEntry::Pair { re, .. } => re,
        }
    }

    /// Whether this is a conjugate pair.
    pub fn is_pair(&self) -> bool {
        matches!(self, PoleEntry::Pair { .. })
    }
}

/// Which member of an entry a marker shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Member {
    /// A real pole.
    Real,
    /// The member of a pair with positive imaginary part (the one stored).
    Upper,
    /// Its conjugate.
    Lower,
}

/// A marker of a pole set on the map: `point` is `[re, im]` in data units.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct PoleMarker {
    pub entry: usize,
    pub member: Member,
    pub point: [f64; 2],
}

/// An ordered list of requested closed-loop poles, conjugate-symmetric by construction.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct PoleSet {
    entries: Vec<PoleEntry>,
}

/// Whether `a` equals `target` to within the conjugate tolerance (largest-component norm,
/// relative to `max(1, |target|)`), exactly as in `poles::check_conjugate_pairs`.
fn is_close(a: Complex64, target: Complex64) -> bool {
    let scale = 1.0_f64.max(target.re.abs().max(target.im.abs()));
    let difference = (a.re - target.re).abs().max((a.im - target.im).abs());
    difference <= CONJUGATE_TOLERANCE * scale
}

fn is_finite(z: Complex64) -> bool {
    z.re.is_finite() && z.im.is_finite()
}

fn require_finite(z: Complex64) -> Result<(), EditError> {
    if is_finite(z) {
        Ok(())
    } else {
        Err(EditError::NotFinite)
    }
}

/// A pair entry at `to`, reflected into the upper half-plane.
fn pair_entry(to: Complex64) -> Result<PoleEntry, EditError> {
    require_finite(to)?;
    let im = to.im.abs();
    if im == 0.0 {
        return Err(EditError::PairOnRealAxis);
    }
    Ok(PoleEntry::Pair { re: to.re, im })
}

impl PoleSet {
    /// The empty set.
    pub fn new() -> PoleSet {
        PoleSet::default()
    }

    /// Pairs a pole list into entries, keeping the order of first appearance.
    ///
    /// A pole with zero imaginary part is a real entry. Each complex pole is matched with
    /// the first later unused complex pole equal to its conjugate within the tolerance of
    /// [`check_conjugate_pairs`]; the pair's entry takes the real part of the member with the
    /// larger imaginary part and the magnitude of that imaginary part (for an exact pair:
    /// the upper member itself).
    ///
    /// # Errors
    /// [`EditError::Poles`] with [`PoleError::NotFinite`] or [`PoleError::MissingConjugate`].
    pub fn from_poles(poles: &[Complex64]) -> Result<PoleSet, EditError> {
        check_conjugate_pairs(poles).map_err(EditError::Poles)?;
        let mut used = vec![false; poles.len()];
        let mut entries = Vec::with_capacity(poles.len());
        for (i, z) in poles.iter().enumerate() {
            if used.get(i).copied().unwrap_or(true) {
                continue;
            }
            if let Some(flag) = used.get_mut(i) {
                *flag = true;
            }
            if z.im == 0.0 {
                entries.push(PoleEntry::Real { re: z.re });
                continue;
            }
            let target = z.conj();
            let partner = poles.iter().enumerate().skip(i + 1).find(|(j, w)| !used.get(*j).copied().unwrap_or(true) && w.im != 0.0 && is_close(**w, target));
            match partner {
                Some((j, w)) => {
                    if let Some(flag) = used.get_mut(j) {
                        *flag = true;
                    }
                    let top = if z.im >= w.im { z } else { w };
                    entries.push(PoleEntry::Pair { re: top.re, im: top.im.abs() });
                }
                // invariant: unreachable after check_conjugate_pairs, which matches greedily
                // with the same rule; reported rather than assumed.
                None => return Err(EditError::Poles(PoleError::MissingConjugate { pole: *z, expected: target })),
            }
        }
        Ok(PoleSet { entries })
    }

    /// A set from entries, checked: every part finite and every pair's `im > 0`.
    ///
    /// # Errors
    /// [`EditError::NotFinite`] or [`EditError::PairOnRealAxis`] (also for `im < 0`).
    pub fn from_entries(entries: Vec<PoleEntry>) -> Result<PoleSet, EditError> {
        for e in &entries {
            require_finite(e.upper())?;
            if let PoleEntry::Pair { im, .. } = e {
                if *im <= 0.0 {
                    return Err(EditError::PairOnRealAxis);
                }
            }
        }
        Ok(PoleSet { entries })
    }

    /// The entries in order.
    pub fn entries(&self) -> &[PoleEntry] {
        &self.entries
    }

    /// Entry `index`, if it exists.
    pub fn entry(&self, index: usize) -> Option<PoleEntry> {
        self.entries.get(index).copied()
    }

    /// Number of entries (a pair counts once).
    pub fn entry_count(&self) -> usize {
        self.entries.len()
    }

    /// Number of poles (a pair counts twice).
    pub fn pole_count(&self) -> usize {
        self.entries.iter().map(PoleEntry::pole_count).sum()
    }

    pub fn is_empty(&self) -> bool {
        self.entries.is_empty()
    }

    /// The poles in entry order, each pair as upper then lower member.
    pub fn poles(&self) -> Vec<Complex64> {
        let mut out = Vec::with_capacity(self.pole_count());
        for e in &self.entries {
            let z = e.upper();
            out.push(z);
            if e.is_pair() {
                out.push(z.conj());
            }
        }
        out
    }

    /// The list as text (`-1±2j, -3`), readable by `poles::parse_poles`.
    pub fn text(&self) -> String {
        format_pole_list(&self.poles())
    }

    fn no_such(&self, entry: usize) -> EditError {
        EditError::NoSuchEntry { entry, entries: self.entries.len() }
    }

    fn existing(&self, entry: usize) -> Result<PoleEntry, EditError> {
        self.entry(entry).ok_or_else(|| self.no_such(entry))
    }

    /// The set after `edit` (see the [module documentation](self) for the rules).
    ///
    /// # Errors
    /// Any [`EditError`] but [`EditError::NoDrag`] and [`EditError::UnusableFrame`]; `self`
    /// is never changed.
    pub fn edited(&self, edit: &Edit) -> Result<PoleSet, EditError> {
        let mut entries = self.entries.clone();
        match edit {
            Edit::Move { entry, to } => {
                require_finite(*to)?;
                let moved = match self.existing(*entry)? {
                    PoleEntry::Real { .. } => PoleEntry::Real { re: to.re },
                    PoleEntry::Pair { .. } => pair_entry(*to)?,
                };
                if let Some(slot) = entries.get_mut(*entry) {
                    *slot = moved;
                }
            }
            Edit::Add(z) => {
                require_finite(*z)?;
                entries.push(if z.im == 0.0 { PoleEntry::Real { re: z.re } } else { pair_entry(*z)? });
            }
            Edit::Remove { entry } => {
                self.existing(*entry)?;
                entries.remove(*entry);
            }
            Edit::Replace(poles) => return PoleSet::from_poles(poles),
            Edit::SplitReal { entries: (a, b), to } => {
                for k in [*a, *b] {
                    if self.existing(k)?.is_pair() {
                        return Err(EditError::NotReal { entry: k });
                    }
                }
                if a == b {
                    return Err(EditError::SameEntry { entry: *a });
                }
                let pair = pair_entry(*to)?;
                let (low, high) = if a < b { (*a, *b) } else { (*b, *a) };
                entries.remove(high);
                if let Some(slot) = entries.get_mut(low) {
                    *slot = pair;
                }
            }
            Edit::MergePair { entry, to } => {
                if !self.existing(*entry)?.is_pair() {
                    return Err(EditError::NotPair { entry: *entry });
                }
                if !(to.0.is_finite() && to.1.is_finite()) {
                    return Err(EditError::NotFinite);
                }
                if let Some(slot) = entries.get_mut(*entry) {
                    *slot = PoleEntry::Real { re: to.0 };
                }
                entries.insert(*entry + 1, PoleEntry::Real { re: to.1 });
            }
        }
        Ok(PoleSet { entries })
    }

    /// Every marker: entries in order, a pair's upper member before its lower one.
    pub fn markers(&self) -> Vec<PoleMarker> {
        let mut out = Vec::with_capacity(self.pole_count());
        for (entry, e) in self.entries.iter().enumerate() {
            match *e {
                PoleEntry::Real { re } => out.push(PoleMarker { entry, member: Member::Real, point: [re, 0.0] }),
                PoleEntry::Pair { re, im } => {
                    out.push(PoleMarker { entry, member: Member::Upper, point: [re, im] });
                    out.push(PoleMarker { entry, member: Member::Lower, point: [re, -im] });
                }
            }
        }
        out
    }

    /// The marker under `pointer` (pixels) within `radius` pixels in `frame`, nearest first
    /// (ties to the earlier marker), via [`plot::hit_test`](crate::plot::hit_test).
    pub fn hit(&self, frame: &Frame, pointer: [f64; 2], radius: f64) -> Option<PoleMarker> {
        let markers = self.markers();
        let pixels: Vec<[f64; 2]> = markers.iter().map(|m| frame.to_pixel(m.point)).collect();
        let k = hit_test(pointer, &pixels, radius)?;
        markers.get(k).copied()
    }
}

impl fmt::Display for PoleSet {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.text())
    }
}

impl TryFrom<&[Complex64]> for PoleSet {
    type Error = EditError;

    fn try_from(poles: &[Complex64]) -> Result<Self, Self::Error> {
        PoleSet::from_poles(poles)
    }
}

impl TryFrom<Vec<Complex64>> for PoleSet {
    type Error = EditError;

    fn try_from(poles: Vec<Complex64>) -> Result<Self, Self::Error> {
        PoleSet::from_poles(&poles)
    }
}

impl From<&PoleSet> for Vec<Complex64> {
    fn from(set: &PoleSet) -> Self {
        set.poles()
    }
}

// ---------------------------------------------------------------------------
// Edits
// ---------------------------------------------------------------------------

/// A change to a [`PoleSet`]; entries are 0-based indices.
#[derive(Debug, Clone, PartialEq)]
pub enum Edit {
    /// Move an entry: a pair as a whole (negative `to.im` reflected), a real pole along the
    /// real axis (`to.im` ignored).
    Move { entry: usize, to: Complex64 },
    /// Add a real pole (`im == 0`) or a pair (otherwise).
    Add(Complex64),
    /// Remove an entry (one or two poles).
    Remove { entry: usize },
    /// Replace the whole list (must pass [`check_conjugate_pairs`]).
    Replace(Vec<Complex64>),
    /// Turn two real poles into the pair at `to` (reflected if `to.im < 0`).
    SplitReal { entries: (usize, usize), to: Complex64 },
    /// Turn a pair into two real poles at `to.0` and `to.1`.
    MergePair { entry: usize, to: (f64, f64) },
}

/// Whether an operation changed the pole list (and, for history operations that record,
/// whether an undo step was added).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Change {
    Changed,
    Unchanged,
}

// ---------------------------------------------------------------------------
// Tests
// ---------------------------------------------------------------------------

#[cfg(test)]
#[path = "../tests/editing.rs"]
mod tests;

#[cfg(test)]
#[path = "../tests/editing_rounding.rs"]
mod rounding_tests;
