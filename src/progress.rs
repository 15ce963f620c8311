//! # Progress of long work (core side)
//!
//! The core announces long work — the planner's search, a long point list,
//! a field map, the conductors' factorisation — as a [`Task`] with a number
//! of steps, and advances it as steps finish. Where the announcements go is
//! decided once, at the edge: the command line installs a [`Sink`] (a
//! progress bar on a terminal) with [`install`]; with none installed, as in
//! the library's tests and in pipes, every call is a no-op costing one
//! atomic load.
//!
//! The core never formats progress: a [`Task`] is a typed name and the
//! counts are plain numbers. A [`Tracker`] is `Sync` (an atomic counter), so
//! rayon workers advance it directly; it tells the sink at most every
//! [`STRIDE`]-th of the work to keep the cost out of inner loops, and ends
//! the task when dropped, also on an early return with an error.

use std::sync::OnceLock;
use std::sync::atomic::{AtomicU64, Ordering};

/// Long work the core announces.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Task {
    /// Assembling and factorising the conductors' boundary-element matrix
    /// (steps: matrix columns, then the factorisation as one step).
    Conductors,
    /// Field and potential at a list of points (steps: points).
    Points,
    /// A field map (steps: grid points).
    Map,
    /// The planner's search over placements (steps: placements scored).
    Plan,
    /// The planner's precomputed influences (steps: field points).
    Influences,
    /// A sweep's assessments (steps: the values swept).
    Sweep,
    /// A sweep's crossings refined by bisection (steps: halvings).
    Crossings,
}

/// Where announcements go (installed once by the command line).
pub trait Sink: Send + Sync {
    /// `task` starts with `total` steps.
    fn begin(&self, task: Task, total: u64);
    /// `done` of the current task's steps are finished.
    fn set(&self, done: u64);
    /// The current task is over (finished or abandoned).
    fn end(&self);
}

static SINK: OnceLock<Box<dyn Sink>> = OnceLock::new();

/// Installs the process-wide sink; returns false if one was installed
/// before (the first stays).
pub fn install(sink: Box<dyn Sink>) -> bool {
    SINK.set(sink).is_ok()
}

/// The tracker tells the sink when another 1/STRIDE of the work is done.
pub const STRIDE: u64 = 200;

/// One announced task; ends it when dropped.
pub struct Tracker {
    total: u64,
    step: u64,
    done: AtomicU64,
    sink: Option<&'static dyn Sink>,
}

impl Tracker {
    /// Announces `task` with `total` steps.
    pub fn new(task: Task, total: u64) -> Tracker {
        let sink = SINK.get().map(|b| &**b);
        if let Some(s) = sink {
            s.begin(task, total);
        }
        Tracker {
            total,
            step: (total / STRIDE).max(1),
            done: AtomicU64::new(0),
            sink,
        }
    }

    /// `n` more steps are finished (callable from any thread).
    pub fn advance(&self, n: u64) {
        let Some(sink) = self.sink else {
            return;
        };
        let before = self.done.fetch_add(n, Ordering::Relaxed);
        let after = before + n;
        if before / self.step != after / self.step || after >= self.total {
            sink.set(after.min(self.total));
        }
    }

    /// Steps finished so far.
    pub fn done(&self) -> u64 {
        self.done.load(Ordering::Relaxed)
    }
}

impl Drop for Tracker {
    fn drop(&mut self) {
        if let Some(s) = self.sink {
            s.end();
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn without_a_sink_the_tracker_only_counts_nothing() {
        // No sink is installed in the library's unit tests.
        let t = Tracker::new(Task::Points, 10);
        t.advance(3);
        assert_eq!(
            t.done(),
            0,
            "no sink: advancing costs one load and stores nothing"
        );
    }
}
