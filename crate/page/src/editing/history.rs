//! Undo and redo of pole edits, with a drag coalesced into one step.

#[allow(unused_imports)]
use super::*;

// ---------------------------------------------------------------------------
// History
// ---------------------------------------------------------------------------

#[derive(Debug, Clone)]
pub(crate) struct Drag {
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
        EditHistory { current: initial, undo: VecDeque::new(), redo: Vec::new(), drag: None, params }
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

    pub(crate) fn push_undo(&mut self, previous: PoleSet) {
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
    pub(crate) fn record(&mut self, previous: PoleSet) {
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
        self.drag = Some(Drag { entry, before: self.current.clone() });
        Ok(())
    }

    /// The entry being dragged, if any.
    pub fn dragging(&self) -> Option<usize> {
        self.drag.as_ref().map(|d| d.entry)
    }

    pub(crate) fn drag_apply(&mut self, edit: &Edit) -> Result<Change, EditError> {
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
