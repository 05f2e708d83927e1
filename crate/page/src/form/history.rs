//! Undo and redo of every form change: a snapshot of the fields whenever they differ from the
//! last one noted (the page notes them at each design cycle, which the typing debounce already
//! coalesces, and before a demo load or a file open), so that each change — a typed pause, a
//! choice, a pole edit, a load — is one step. The text fields keep the browser's own undo for
//! typing inside them.

use super::FormInput;

/// Snapshots kept by default.
pub const DEFAULT_DEPTH: usize = 100;

/// The forms noted so far (the last one is the current form) and those undone.
#[derive(Debug, Clone)]
pub struct FormHistory {
    past: Vec<FormInput>,
    future: Vec<FormInput>,
    depth: usize,
}

impl Default for FormHistory {
    fn default() -> Self {
        FormHistory { past: Vec::new(), future: Vec::new(), depth: DEFAULT_DEPTH }
    }
}

impl FormHistory {
    /// A history keeping at most `depth` snapshots (at least 2).
    pub fn with_depth(depth: usize) -> Self {
        FormHistory { depth: depth.max(2), ..FormHistory::default() }
    }

    /// Notes the current form; true when it is a new step (a change since the last one noted).
    /// A new step ends what could be redone.
    pub fn note(&mut self, form: &FormInput) -> bool {
        if self.past.last() == Some(form) {
            return false;
        }
        self.past.push(form.clone());
        if self.past.len() > self.depth {
            self.past.remove(0);
        }
        self.future.clear();
        true
    }

    /// The form before the current one (which becomes redoable), if any.
    pub fn undo(&mut self) -> Option<&FormInput> {
        if self.past.len() < 2 {
            return None;
        }
        let current = self.past.pop()?;
        self.future.push(current);
        self.past.last()
    }

    /// The form last undone, if any.
    pub fn redo(&mut self) -> Option<&FormInput> {
        let next = self.future.pop()?;
        self.past.push(next);
        self.past.last()
    }

    pub fn can_undo(&self) -> bool {
        self.past.len() >= 2
    }

    pub fn can_redo(&self) -> bool {
        !self.future.is_empty()
    }
}

#[cfg(test)]
#[path = "../tests/form_history.rs"]
mod tests;
