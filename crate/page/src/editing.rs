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
        EditParams {
            history_limit: 200,
            nudge_fraction: 0.01,
            large_nudge_fraction: 0.1,
            pair_axis_clearance: 0.005,
            hit_radius_px: HIT_RADIUS_PX,
        }
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
            EditError::NoSuchEntry { entry, entries } => write!(
                f,
                "there is no pole entry {} (the list has {entries}); choose a pole on the map",
                entry.saturating_add(1)
            ),
            EditError::NotFinite => write!(
                f,
                "the new position is not a finite number; the pole was left where it was"
            ),
            EditError::PairOnRealAxis => write!(
                f,
                "a conjugate pair cannot sit on the real axis; merge it into two real poles \
                 instead"
            ),
            EditError::NotReal { entry } => write!(
                f,
                "pole entry {} is a conjugate pair; only two real poles can be split into a pair",
                entry.saturating_add(1)
            ),
            EditError::NotPair { entry } => write!(
                f,
                "pole entry {} is a real pole; only a conjugate pair can be merged into two \
                 real poles",
                entry.saturating_add(1)
            ),
            EditError::SameEntry { entry } => write!(
                f,
                "pole entry {} was named twice; a pair is made from two different real poles",
                entry.saturating_add(1)
            ),
            EditError::Poles(inner) => inner.fmt(f),
            EditError::NoDrag => write!(f, "no pole is being dragged"),
            EditError::UnusableFrame => write!(
                f,
                "the pole map has no usable scale; resize or redraw it and try again"
            ),
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
            let partner = poles.iter().enumerate().skip(i + 1).find(|(j, w)| {
                !used.get(*j).copied().unwrap_or(true) && w.im != 0.0 && is_close(**w, target)
            });
            match partner {
                Some((j, w)) => {
                    if let Some(flag) = used.get_mut(j) {
                        *flag = true;
                    }
                    let top = if z.im >= w.im { z } else { w };
                    entries.push(PoleEntry::Pair {
                        re: top.re,
                        im: top.im.abs(),
                    });
                }
                // invariant: unreachable after check_conjugate_pairs, which matches greedily
                // with the same rule; reported rather than assumed.
                None => {
                    return Err(EditError::Poles(PoleError::MissingConjugate {
                        pole: *z,
                        expected: target,
                    }))
                }
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
        EditError::NoSuchEntry {
            entry,
            entries: self.entries.len(),
        }
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
                entries.push(if z.im == 0.0 {
                    PoleEntry::Real { re: z.re }
                } else {
                    pair_entry(*z)?
                });
            }
            Edit::Remove { entry } => {
                self.existing(*entry)?;
                entries.remove(*entry);
            }
            Edit::Replace(poles) => return PoleSet::from_poles(poles),
            Edit::SplitReal {
                entries: (a, b),
                to,
            } => {
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
                PoleEntry::Real { re } => out.push(PoleMarker {
                    entry,
                    member: Member::Real,
                    point: [re, 0.0],
                }),
                PoleEntry::Pair { re, im } => {
                    out.push(PoleMarker {
                        entry,
                        member: Member::Upper,
                        point: [re, im],
                    });
                    out.push(PoleMarker {
                        entry,
                        member: Member::Lower,
                        point: [re, -im],
                    });
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
    SplitReal {
        entries: (usize, usize),
        to: Complex64,
    },
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
// History
// ---------------------------------------------------------------------------

#[derive(Debug, Clone)]
struct Drag {
    entry: usize,
    before: PoleSet,
}

/// The current pole list with undo and redo (see the [module documentation](self)).
#[derive(Debug, Clone)]
pub struct EditHistory {
    current: PoleSet,
    undo: VecDeque<PoleSet>,
    redo: Vec<PoleSet>,
    drag: Option<Drag>,
    params: EditParams,
}

impl EditHistory {
    /// A history starting at `initial`, with nothing to undo.
    pub fn new(initial: PoleSet, params: EditParams) -> EditHistory {
        EditHistory {
            current: initial,
            undo: VecDeque::new(),
            redo: Vec::new(),
            drag: None,
            params,
        }
    }

    /// The current pole list.
    pub fn current(&self) -> &PoleSet {
        &self.current
    }

    pub fn params(&self) -> &EditParams {
        &self.params
    }

    pub fn can_undo(&self) -> bool {
        !self.undo.is_empty()
    }

    pub fn can_redo(&self) -> bool {
        !self.redo.is_empty()
    }

    /// Number of steps that can be undone.
    pub fn undo_steps(&self) -> usize {
        self.undo.len()
    }

    /// Number of steps that can be redone.
    pub fn redo_steps(&self) -> usize {
        self.redo.len()
    }

    fn push_undo(&mut self, previous: PoleSet) {
        if self.params.history_limit == 0 {
            self.undo.clear();
            return;
        }
        self.undo.push_back(previous);
        while self.undo.len() > self.params.history_limit {
            self.undo.pop_front();
        }
    }

    /// A new step: `previous` becomes undoable and the redo list is cleared.
    fn record(&mut self, previous: PoleSet) {
        self.push_undo(previous);
        self.redo.clear();
    }

    /// Applies `edit` as one undo step (ending any drag first). An edit that leaves the list
    /// as it was records nothing and keeps the redo list.
    ///
    /// # Errors
    /// As [`PoleSet::edited`]; the list and the history are then unchanged.
    pub fn apply(&mut self, edit: &Edit) -> Result<Change, EditError> {
        self.end_drag();
        let next = self.current.edited(edit)?;
        if next == self.current {
            return Ok(Change::Unchanged);
        }
        let previous = std::mem::replace(&mut self.current, next);
        self.record(previous);
        Ok(Change::Changed)
    }

    /// Goes back one step (ending any drag first); `None` when there is nothing to undo.
    pub fn undo(&mut self) -> Option<&PoleSet> {
        self.end_drag();
        let previous = self.undo.pop_back()?;
        let undone = std::mem::replace(&mut self.current, previous);
        self.redo.push(undone);
        Some(&self.current)
    }

    /// Goes forward one undone step (ending any drag first); `None` when there is none.
    pub fn redo(&mut self) -> Option<&PoleSet> {
        self.end_drag();
        let next = self.redo.pop()?;
        let previous = std::mem::replace(&mut self.current, next);
        self.push_undo(previous);
        Some(&self.current)
    }

    /// Starts dragging entry `entry` (ending any earlier drag first).
    ///
    /// # Errors
    /// [`EditError::NoSuchEntry`].
    pub fn begin_drag(&mut self, entry: usize) -> Result<(), EditError> {
        self.end_drag();
        self.current.existing(entry)?;
        self.drag = Some(Drag {
            entry,
            before: self.current.clone(),
        });
        Ok(())
    }

    /// The entry being dragged, if any.
    pub fn dragging(&self) -> Option<usize> {
        self.drag.as_ref().map(|d| d.entry)
    }

    fn drag_apply(&mut self, edit: &Edit) -> Result<Change, EditError> {
        let next = self.current.edited(edit)?;
        if next == self.current {
            return Ok(Change::Unchanged);
        }
        self.current = next;
        Ok(Change::Changed)
    }

    /// Moves the dragged entry to `to` (rules of [`Edit::Move`]), recording nothing yet.
    ///
    /// # Errors
    /// [`EditError::NoDrag`], or as [`Edit::Move`]; the list is then unchanged and the drag
    /// goes on.
    pub fn drag_to(&mut self, to: Complex64) -> Result<Change, EditError> {
        let entry = self.dragging().ok_or(EditError::NoDrag)?;
        self.drag_apply(&Edit::Move { entry, to })
    }

    /// Moves the dragged entry under the pointer ([`drag_edit`] with this history's
    /// parameters). Use the frame the map had when the drag began, so that the view does not
    /// rescale under the pointer as the poles move.
    ///
    /// # Errors
    /// As [`EditHistory::drag_to`] and [`drag_edit`].
    pub fn drag_to_pixel(&mut self, frame: &Frame, pointer: [f64; 2]) -> Result<Change, EditError> {
        let entry = self.dragging().ok_or(EditError::NoDrag)?;
        let edit = drag_edit(&self.current, entry, frame, pointer, &self.params)?;
        self.drag_apply(&edit)
    }

    /// [`EditHistory::drag_to_pixel`] for a list shown through `map` ([`drag_edit_mapped`]),
    /// the target rounded to [`MAP_EDIT_DIGITS`] significant digits ([`rounded_move`]).
    ///
    /// # Errors
    /// As [`EditHistory::drag_to`] and [`drag_edit_mapped`].
    pub fn drag_to_pixel_mapped(&mut self, frame: &Frame, pointer: [f64; 2], map: PlaneMap) -> Result<Change, EditError> {
        let entry = self.dragging().ok_or(EditError::NoDrag)?;
        let edit = rounded_move(drag_edit_mapped(&self.current, entry, frame, pointer, &self.params, map)?);
        self.drag_apply(&edit)
    }

    /// Ends the drag: one undo step if the list differs from where the drag began
    /// ([`Change::Changed`]); nothing without a drag or movement.
    pub fn end_drag(&mut self) -> Change {
        match self.drag.take() {
            Some(drag) if drag.before != self.current => {
                self.record(drag.before);
                Change::Changed
            }
            _ => Change::Unchanged,
        }
    }

    /// Abandons the drag, putting the list back as it was when the drag began.
    pub fn cancel_drag(&mut self) -> Change {
        match self.drag.take() {
            Some(drag) if drag.before != self.current => {
                self.current = drag.before;
                Change::Changed
            }
            _ => Change::Unchanged,
        }
    }
}

// ---------------------------------------------------------------------------
// Keyboard and pointer
// ---------------------------------------------------------------------------

/// An arrow key.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Direction {
    Left,
    Right,
    Up,
    Down,
}

impl Direction {
    /// The direction to pass to [`nudge`] when `member` is focused: Up and Down swapped for
    /// a pair's lower member (moving it down moves the upper member up), others unchanged.
    pub fn for_member(self, member: Member) -> Direction {
        match (member, self) {
            (Member::Lower, Direction::Up) => Direction::Down,
            (Member::Lower, Direction::Down) => Direction::Up,
            (_, d) => d,
        }
    }
}

/// Keyboard step size.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum StepSize {
    /// [`EditParams::nudge_fraction`] of the span.
    Normal,
    /// [`EditParams::large_nudge_fraction`] of the span.
    Large,
}

/// Why a nudge does nothing.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum NoChangeReason {
    /// Up or Down on a real pole: it stays on the real axis.
    RealPoleStaysOnAxis,
    /// Down on a pair already at (or inside) the axis clearance.
    PairAtAxisClearance,
}

impl fmt::Display for NoChangeReason {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            NoChangeReason::RealPoleStaysOnAxis => write!(
                f,
                "a real pole stays on the real axis; use left and right to move it, or split \
                 two real poles into a pair"
            ),
            NoChangeReason::PairAtAxisClearance => write!(
                f,
                "the pair is as close to the real axis as it can be dragged; merge it to make \
                 two real poles"
            ),
        }
    }
}

/// What a key press does.
#[derive(Debug, Clone, PartialEq)]
pub enum NudgeOutcome {
    /// Apply this edit (an [`Edit::Move`]).
    Edit(Edit),
    /// Nothing to do, and why.
    NoChange(NoChangeReason),
}

/// The frame's larger data span.
///
/// # Errors
/// [`EditError::UnusableFrame`] when it is not a positive finite number.
pub fn frame_span(frame: &Frame) -> Result<f64, EditError> {
    let span = frame.x.range.span().max(frame.y.range.span());
    if span.is_finite() && span > 0.0 {
        Ok(span)
    } else {
        Err(EditError::UnusableFrame)
    }
}

/// Smallest imaginary part a drag or nudge gives a pair in `frame`.
///
/// # Errors
/// [`EditError::UnusableFrame`].
pub fn axis_clearance(frame: &Frame, params: &EditParams) -> Result<f64, EditError> {
    let fraction = params.pair_axis_clearance;
    let fraction = if fraction.is_finite() && fraction > 0.0 {
        fraction
    } else {
        0.0
    };
    Ok(fraction * frame_span(frame)?)
}

/// The keyboard step in data units for `frame`.
///
/// # Errors
/// [`EditError::UnusableFrame`] also when the fraction is not a positive finite number.
pub fn nudge_step(frame: &Frame, step: StepSize, params: &EditParams) -> Result<f64, EditError> {
    let fraction = match step {
        StepSize::Normal => params.nudge_fraction,
        StepSize::Large => params.large_nudge_fraction,
    };
    let distance = fraction * frame_span(frame)?;
    if distance.is_finite() && distance > 0.0 {
        Ok(distance)
    } else {
        Err(EditError::UnusableFrame)
    }
}

/// The edit for one arrow-key press on entry `entry` of `set` (see the
/// [module documentation](self)). Apply the returned edit with [`EditHistory::apply`].
///
/// # Errors
/// [`EditError::NoSuchEntry`] or [`EditError::UnusableFrame`]. A move that overflows to a
/// non-finite position is refused when applied.
pub fn nudge(
    set: &PoleSet,
    entry: usize,
    direction: Direction,
    step: StepSize,
    frame: &Frame,
    params: &EditParams,
) -> Result<NudgeOutcome, EditError> {
    let current = set.existing(entry)?;
    let distance = nudge_step(frame, step, params)?;
    let z = current.upper();
    let to = match (current, direction) {
        (_, Direction::Left) => Complex64::new(z.re - distance, z.im),
        (_, Direction::Right) => Complex64::new(z.re + distance, z.im),
        (PoleEntry::Real { .. }, Direction::Up | Direction::Down) => {
            return Ok(NudgeOutcome::NoChange(NoChangeReason::RealPoleStaysOnAxis))
        }
        (PoleEntry::Pair { .. }, Direction::Up) => Complex64::new(z.re, z.im + distance),
        (PoleEntry::Pair { .. }, Direction::Down) => {
            let floor = axis_clearance(frame, params)?;
            if z.im <= floor {
                return Ok(NudgeOutcome::NoChange(NoChangeReason::PairAtAxisClearance));
            }
            Complex64::new(z.re, (z.im - distance).max(floor))
        }
    };
    Ok(NudgeOutcome::Edit(Edit::Move { entry, to }))
}

/// The data position `[re, im]` of a pointer pixel in `frame`, as a complex number.
///
/// # Errors
/// [`EditError::NotFinite`] for a non-finite pointer (or result).
pub fn pointer_position(frame: &Frame, pointer: [f64; 2]) -> Result<Complex64, EditError> {
    let [re, im] = frame.to_data(pointer);
    let z = Complex64::new(re, im);
    require_finite(z)?;
    Ok(z)
}

/// The edit that puts entry `entry` of `set` under the pointer: a real pole at the pointer's
/// real part; a pair with its upper member at the pointer reflected into the upper
/// half-plane and at least [`axis_clearance`] from the axis.
///
/// # Errors
/// [`EditError::NoSuchEntry`], [`EditError::NotFinite`] or [`EditError::UnusableFrame`].
pub fn drag_edit(
    set: &PoleSet,
    entry: usize,
    frame: &Frame,
    pointer: [f64; 2],
    params: &EditParams,
) -> Result<Edit, EditError> {
    let current = set.existing(entry)?;
    let at = pointer_position(frame, pointer)?;
    let to = match current {
        PoleEntry::Real { .. } => Complex64::new(at.re, 0.0),
        PoleEntry::Pair { .. } => {
            Complex64::new(at.re, at.im.abs().max(axis_clearance(frame, params)?))
        }
    };
    Ok(Edit::Move { entry, to })
}

// ---------------------------------------------------------------------------
// A list in one plane, shown on a map in another
// ---------------------------------------------------------------------------

/// How the plane of the list being edited relates to the plane of the map it is shown on.
///
/// A digital design may be specified by s-plane poles while its map is the z-plane:
/// the map then shows `z = e^{sT}` (the usual pole mapping of a sampled system, e.g.
/// Franklin, Powell & Workman, *Digital Control of Dynamic Systems*, 3rd ed., 1998, §4.3;
/// from memory), and an edit made on the map is brought back with `s = ln z / T` on the
/// principal branch (`0 < Im s < π/T` for the upper member of a pair).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PlaneMap {
    /// The list is in the map's own plane.
    Same,
    /// The list is in the s-plane; the map is the z-plane of sample time `sample_time` (s).
    SampledFromS { sample_time: f64 },
}

impl PlaneMap {
    /// A list pole's position on the map.
    pub fn to_map(&self, pole: Complex64) -> Complex64 {
        match *self {
            PlaneMap::Same => pole,
            PlaneMap::SampledFromS { sample_time } => crate::plane::z_from_s(pole, sample_time),
        }
    }

    /// The list position of map point `at`; `real` keeps a real pole real.
    ///
    /// # Errors
    /// [`EditError::NotFinite`] (e.g. `z = 0`, or a sample time that is not positive),
    /// [`EditError::NoRealEquivalent`] for a real pole at `z ≤ 0`.
    pub fn from_map(&self, at: Complex64, real: bool) -> Result<Complex64, EditError> {
        let out = match *self {
            PlaneMap::Same => at,
            PlaneMap::SampledFromS { sample_time } => {
                if !(sample_time.is_finite() && sample_time > 0.0) {
                    return Err(EditError::NotFinite);
                }
                if real {
                    if !(at.re > 0.0) {
                        return Err(EditError::NoRealEquivalent { z: at.re });
                    }
                    Complex64::new(at.re.ln() / sample_time, 0.0)
                } else {
                    crate::plane::s_from_z(at, sample_time).ok_or(EditError::NotFinite)?
                }
            }
        };
        require_finite(out)?;
        Ok(out)
    }

    /// `set` as it appears on the map.
    ///
    /// # Errors
    /// [`EditError::PairOnRealAxis`] when a pair lands on the real axis of the map (an
    /// s-plane pair at `Im s = π/T` aliases onto it), [`EditError::NotFinite`].
    pub fn map_set(&self, set: &PoleSet) -> Result<PoleSet, EditError> {
        if *self == PlaneMap::Same {
            return Ok(set.clone());
        }
        let entries = set
            .entries()
            .iter()
            .map(|e| match *e {
                PoleEntry::Real { re } => PoleEntry::Real { re: self.to_map(Complex64::new(re, 0.0)).re },
                PoleEntry::Pair { re, im } => {
                    let z = self.to_map(Complex64::new(re, im));
                    PoleEntry::Pair { re: z.re, im: z.im }
                }
            })
            .collect();
        PoleSet::from_entries(entries)
    }

    /// Brings a map edit back to the list's plane (a [`Edit::Move`]; other edits pass
    /// through).
    ///
    /// # Errors
    /// As [`PlaneMap::from_map`], and [`EditError::NoSuchEntry`].
    pub fn edit_from_map(&self, set: &PoleSet, edit: Edit) -> Result<Edit, EditError> {
        match edit {
            Edit::Move { entry, to } if *self != PlaneMap::Same => {
                let real = !set.existing(entry)?.is_pair();
                Ok(Edit::Move { entry, to: self.from_map(to, real)? })
            }
            other => Ok(other),
        }
    }
}

/// Significant digits kept in a pole placed from the map ([`round_pole`]): five, a
/// resolution of 1e-5 of the pole's magnitude, finer than a pixel on any map that shows it.
pub const MAP_EDIT_DIGITS: i32 = 5;

/// `z` with both parts rounded to a step of `10^(⌊log10 |z|⌋ − digits + 1)`, so that a pole
/// placed with the pointer reads `-12.346±9.8765j` rather than sixteen digits of pixel noise.
/// Zero and non-finite values are returned unchanged; a real part that rounds to zero stays
/// a (signed) zero and an imaginary part is never rounded to zero when it was not (the step
/// is then halved until it survives), so a pair stays a pair.
pub fn round_pole(z: Complex64, digits: i32) -> Complex64 {
    let size = z.norm();
    if !(size.is_finite() && size > 0.0) {
        return z;
    }
    let mut step = 10f64.powi(size.log10().floor() as i32 - digits.max(1) + 1);
    let round = |x: f64, step: f64| if step > 0.0 && step.is_finite() { (x / step).round() * step } else { x };
    let re = round(z.re, step);
    let mut im = round(z.im, step);
    while z.im != 0.0 && im == 0.0 && step > f64::MIN_POSITIVE {
        step /= 10.0;
        im = round(z.im, step);
    }
    let out = Complex64::new(re, if z.im != 0.0 && im == 0.0 { z.im } else { im });
    if out.re.is_finite() && out.im.is_finite() {
        out
    } else {
        z
    }
}

/// A move with its target rounded by [`round_pole`] ([`MAP_EDIT_DIGITS`]); other edits pass
/// through.
pub fn rounded_move(edit: Edit) -> Edit {
    match edit {
        Edit::Move { entry, to } => Edit::Move { entry, to: round_pole(to, MAP_EDIT_DIGITS) },
        other => other,
    }
}

/// [`drag_edit`] for a list shown through `map`: the pointer is read on the map and the
/// move is brought back to the list's plane.
///
/// # Errors
/// As [`drag_edit`] and [`PlaneMap::from_map`].
pub fn drag_edit_mapped(set: &PoleSet, entry: usize, frame: &Frame, pointer: [f64; 2], params: &EditParams, map: PlaneMap) -> Result<Edit, EditError> {
    let shown = map.map_set(set)?;
    let edit = drag_edit(&shown, entry, frame, pointer, params)?;
    map.edit_from_map(set, edit)
}

/// [`nudge`] for a list shown through `map`: the step is taken on the map (so the same
/// keyboard step moves the marker the same number of pixels) and brought back.
///
/// # Errors
/// As [`nudge`] and [`PlaneMap::from_map`].
pub fn nudge_mapped(set: &PoleSet, entry: usize, direction: Direction, step: StepSize, frame: &Frame, params: &EditParams, map: PlaneMap) -> Result<NudgeOutcome, EditError> {
    let shown = map.map_set(set)?;
    match nudge(&shown, entry, direction, step, frame, params)? {
        NudgeOutcome::Edit(edit) => Ok(NudgeOutcome::Edit(map.edit_from_map(set, edit)?)),
        other => Ok(other),
    }
}

// ---------------------------------------------------------------------------
// Comparison
// ---------------------------------------------------------------------------

/// One figure of merit, or why it is missing.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "kind", content = "value", rename_all = "snake_case")]
pub enum Figure {
    /// A number (may be `+∞`, e.g. a singular eigenvector matrix; never NaN).
    Value(f64),
    /// The response had not settled by the end of the simulation.
    NotSettled,
    /// The figure does not exist for this design (no limit, state starting at zero, …).
    NotAvailable,
}

impl Figure {
    /// `Value(x)`, or `NotAvailable` for NaN.
    pub fn from_number(x: f64) -> Figure {
        if x.is_nan() {
            Figure::NotAvailable
        } else {
            Figure::Value(x)
        }
    }

    /// A settling time: `None` is not settled.
    pub fn from_settling(t: Option<f64>) -> Figure {
        t.map_or(Figure::NotSettled, Figure::from_number)
    }

    /// Short text: the number with four significant figures, `not settled` or `—`.
    pub fn text(&self) -> String {
        match self {
            Figure::Value(x) => fmt_num(*x),
            Figure::NotSettled => "not settled".into(),
            Figure::NotAvailable => "—".into(),
        }
    }
}

/// Peak command of one input.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InputSummary {
    pub name: String,
    /// Unit text (may be empty).
    pub unit: String,
    /// Peak of the commanded `|u|`.
    pub peak: Figure,
    pub limit: Option<f64>,
    /// `peak / limit` (`NotAvailable` without a positive finite limit).
    pub peak_over_limit: Figure,
}

/// Tracking figures of one output, from the whole-loop simulation.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TrackedSummary {
    pub name: String,
    /// Seconds (`NotSettled` when not settled).
    pub settling_time: Figure,
    /// Percent of the reference step.
    pub overshoot: Figure,
    /// `|steady-state error|`, in the output's unit.
    pub steady_state_error: Figure,
}

/// The figures of merit of one design run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DesignSummary {
    /// The requested poles as text.
    pub poles: String,
    pub state_names: Vec<String>,
    /// Per state, seconds.
    pub settling_time: Vec<Figure>,
    /// The largest of them; `NotSettled` if any state has not settled.
    pub slowest_settling_time: Figure,
    /// Per state, percent of the initial value (`NotAvailable` for a state starting at 0).
    pub overshoot: Vec<Figure>,
    /// The largest available one; `NotAvailable` when none is.
    pub largest_overshoot: Figure,
    pub inputs: Vec<InputSummary>,
    /// `‖K‖₂`.
    pub gain_norm: Figure,
    /// `κ₂(X)` of the closed-loop eigenvectors.
    pub eigenvector_condition: Figure,
    /// Largest relative distance between requested and achieved poles.
    pub max_pole_error: Figure,
    /// Per tracked output (empty without a whole-loop simulation).
    pub tracked: Vec<TrackedSummary>,
}

fn pair_to_complex(p: &Pair) -> Complex64 {
    Complex64::new(p[0], p[1])
}

/// Slowest settling time of a list: `NotSettled` wins, then the largest value.
fn slowest(times: &[Figure]) -> Figure {
    let mut worst: Option<f64> = None;
    for t in times {
        match t {
            Figure::NotSettled => return Figure::NotSettled,
            Figure::Value(x) => worst = Some(worst.map_or(*x, |w| w.max(*x))),
            Figure::NotAvailable => {}
        }
    }
    worst.map_or(Figure::NotAvailable, Figure::Value)
}

/// Largest available value of a list.
fn largest(values: &[Figure]) -> Figure {
    values
        .iter()
        .filter_map(|v| match v {
            Figure::Value(x) => Some(*x),
            _ => None,
        })
        .fold(None, |acc: Option<f64>, x| {
            Some(acc.map_or(x, |a| a.max(x)))
        })
        .map_or(Figure::NotAvailable, Figure::Value)
}

impl DesignSummary {
    /// The summary of a design run: state figures from its regulator simulation, peak inputs
    /// against their limits, the gain and its conditioning, and (with a whole-loop
    /// simulation) the tracking figures of each tracked output.
    pub fn from_result(result: &DesignResult) -> DesignSummary {
        let sim = &result.simulation;
        let requested: Vec<Complex64> = result
            .feedback
            .requested_poles
            .iter()
            .map(pair_to_complex)
            .collect();
        let settling_time: Vec<Figure> = sim
            .settling_time
            .iter()
            .map(|t| Figure::from_settling(*t))
            .collect();
        let overshoot: Vec<Figure> = sim
            .overshoot
            .iter()
            .map(|o| o.map_or(Figure::NotAvailable, |x| Figure::from_number(x * 100.0)))
            .collect();
        let plant = &result.plant;
        let inputs = sim
            .peak_input
            .iter()
            .enumerate()
            .map(|(i, peak)| {
                let limit = sim.input_limit.get(i).copied().flatten();
                let peak_over_limit = match limit {
                    Some(l) if l.is_finite() && l > 0.0 => Figure::from_number(peak / l),
                    _ => Figure::NotAvailable,
                };
                InputSummary {
                    name: plant
                        .input_names
                        .get(i)
                        .cloned()
                        .unwrap_or_else(|| format!("u{}", i + 1)),
                    unit: plant.input_units.get(i).cloned().unwrap_or_default(),
                    peak: Figure::from_number(*peak),
                    limit,
                    peak_over_limit,
                }
            })
            .collect();
        let tracked = result
            .closed_loop
            .as_ref()
            .map(|l| {
                l.tracked
                    .iter()
                    .map(|t| TrackedSummary {
                        name: t.name.clone(),
                        settling_time: Figure::from_settling(t.settling_time),
                        overshoot: Figure::from_number(t.overshoot * 100.0),
                        steady_state_error: Figure::from_number(t.steady_state_error.abs()),
                    })
                    .collect()
            })
            .unwrap_or_default();
        DesignSummary {
            poles: format_pole_list(&requested),
            state_names: plant.state_names.clone(),
            slowest_settling_time: slowest(&settling_time),
            settling_time,
            largest_overshoot: largest(&overshoot),
            overshoot,
            inputs,
            gain_norm: Figure::from_number(result.feedback.gain_norm),
            eigenvector_condition: Figure::from_number(result.feedback.eigenvector_condition),
            max_pole_error: Figure::from_number(result.feedback.max_pole_error),
            tracked,
        }
    }
}

impl From<&DesignResult> for DesignSummary {
    fn from(result: &DesignResult) -> Self {
        DesignSummary::from_result(result)
    }
}

/// Which design is better on a figure (lower is better).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Which {
    Pinned,
    Current,
    /// Equal values (within [`ComparisonParams::equal_within`]).
    Same,
    /// No basis to choose: a figure is not available, or neither has settled.
    Undecided,
}

/// One line of a comparison table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ComparisonRow {
    /// Plain label, e.g. `slowest settling time (s)`.
    pub figure: String,
    pub pinned: Figure,
    pub current: Figure,
    /// [`Figure::text`] of each.
    pub pinned_text: String,
    pub current_text: String,
    pub better: Which,
}

/// Which of two figures is better, lower being better.
pub fn better_of(pinned: Figure, current: Figure, params: &ComparisonParams) -> Which {
    match (pinned, current) {
        (Figure::Value(a), Figure::Value(b)) => {
            if a.is_nan() || b.is_nan() {
                return Which::Undecided;
            }
            let tolerance = if params.equal_within.is_finite() && params.equal_within > 0.0 {
                params.equal_within
            } else {
                0.0
            };
            let finite_close =
                a.is_finite() && b.is_finite() && (a - b).abs() <= tolerance * a.abs().max(b.abs());
            if a == b || finite_close {
                Which::Same
            } else if a < b {
                Which::Pinned
            } else {
                Which::Current
            }
        }
        (Figure::Value(a), Figure::NotSettled) if !a.is_nan() => Which::Pinned,
        (Figure::NotSettled, Figure::Value(b)) if !b.is_nan() => Which::Current,
        _ => Which::Undecided,
    }
}

fn row(
    figure: String,
    pinned: Figure,
    current: Figure,
    params: &ComparisonParams,
) -> ComparisonRow {
    ComparisonRow {
        figure,
        pinned,
        current,
        pinned_text: pinned.text(),
        current_text: current.text(),
        better: better_of(pinned, current, params),
    }
}

fn with_unit(label: String, unit: &str) -> String {
    if unit.trim().is_empty() {
        label
    } else {
        format!("{label} ({unit})")
    }
}

/// Compares a pinned design with the current one ([`compare_with`] at default parameters).
pub fn compare(pinned: &DesignSummary, current: &DesignSummary) -> Vec<ComparisonRow> {
    compare_with(pinned, current, &ComparisonParams::default())
}

/// Rows in this order: slowest settling time, largest overshoot, one row per input (its
/// peak over its limit when both designs have a limit for it, else its raw peak; inputs are
/// matched by position), gain norm, eigenvector condition, largest pole error, then for each
/// tracked output (matched by name; pinned order, then outputs only the current design
/// tracks) its settling time, overshoot and steady-state error. A figure one design lacks is
/// [`Figure::NotAvailable`] on that side.
pub fn compare_with(
    pinned: &DesignSummary,
    current: &DesignSummary,
    params: &ComparisonParams,
) -> Vec<ComparisonRow> {
    let mut rows = vec![
        row(
            "slowest settling time (s)".into(),
            pinned.slowest_settling_time,
            current.slowest_settling_time,
            params,
        ),
        row(
            "largest overshoot (%)".into(),
            pinned.largest_overshoot,
            current.largest_overshoot,
            params,
        ),
    ];
    let inputs = pinned.inputs.len().max(current.inputs.len());
    for i in 0..inputs {
        let (p, c) = (pinned.inputs.get(i), current.inputs.get(i));
        let Some(named) = c.or(p) else { continue };
        let has_limit = |s: Option<&InputSummary>| {
            s.is_none_or(|s| matches!(s.peak_over_limit, Figure::Value(_)))
        };
        let (label, pick): (String, fn(&InputSummary) -> Figure) = if has_limit(p) && has_limit(c) {
            (format!("peak input {} / limit", named.name), |s| {
                s.peak_over_limit
            })
        } else {
            (
                with_unit(format!("peak input {}", named.name), &named.unit),
                |s| s.peak,
            )
        };
        let side = |s: Option<&InputSummary>| s.map_or(Figure::NotAvailable, pick);
        rows.push(row(label, side(p), side(c), params));
    }
    rows.push(row(
        "gain norm ‖K‖".into(),
        pinned.gain_norm,
        current.gain_norm,
        params,
    ));
    rows.push(row(
        "eigenvector condition κ₂(X)".into(),
        pinned.eigenvector_condition,
        current.eigenvector_condition,
        params,
    ));
    rows.push(row(
        "largest pole error (relative)".into(),
        pinned.max_pole_error,
        current.max_pole_error,
        params,
    ));
    let mut names: Vec<&str> = pinned.tracked.iter().map(|t| t.name.as_str()).collect();
    for t in &current.tracked {
        if !names.contains(&t.name.as_str()) {
            names.push(&t.name);
        }
    }
    for name in names {
        let find = |s: &DesignSummary| s.tracked.iter().find(|t| t.name == name).cloned();
        let (p, c) = (find(pinned), find(current));
        let side = |s: &Option<TrackedSummary>, pick: fn(&TrackedSummary) -> Figure| {
            s.as_ref().map_or(Figure::NotAvailable, pick)
        };
        rows.push(row(
            format!("settling time of {name} (s)"),
            side(&p, |t| t.settling_time),
            side(&c, |t| t.settling_time),
            params,
        ));
        rows.push(row(
            format!("overshoot of {name} (%)"),
            side(&p, |t| t.overshoot),
            side(&c, |t| t.overshoot),
            params,
        ));
        rows.push(row(
            format!("steady-state error of {name}"),
            side(&p, |t| t.steady_state_error),
            side(&c, |t| t.steady_state_error),
            params,
        ));
    }
    rows
}

// ---------------------------------------------------------------------------
// Tests
// ---------------------------------------------------------------------------

#[cfg(test)]
#[path = "tests/editing.rs"]
mod tests;
