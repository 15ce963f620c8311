//! # Progress bars on the terminal
//!
//! Output side of [`crate::progress`]: a [`crate::progress::Sink`] that
//! draws one bar per announced task on stderr, with the steps done, the
//! rate and an estimate of the time left (the `indicatif` crate). The
//! command line installs it only when stderr is a terminal and `--quiet`
//! is not given, so pipes, files and CI see nothing. A bar appears only
//! once its task has run for [`DELAY`]: short work stays silent.

use crate::progress::{Sink, Task};
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use std::sync::Mutex;
use std::time::{Duration, Instant};

/// Work shorter than this shows no bar.
pub const DELAY: Duration = Duration::from_millis(800);

/// The words for a task on its bar.
fn label(task: Task) -> &'static str {
    match task {
        Task::Conductors => "conductors: matrix",
        Task::Points => "field at points",
        Task::Map => "field map",
        Task::Plan => "planner: placements",
        Task::Influences => "planner: influences",
        Task::Sweep => "sweep: values",
        Task::Crossings => "sweep: crossings",
    }
}

struct Current {
    task: Task,
    total: u64,
    started: Instant,
    bar: Option<ProgressBar>,
}

/// Bars on stderr.
pub struct TerminalBars {
    current: Mutex<Option<Current>>,
}

impl TerminalBars {
    /// A sink drawing on stderr.
    pub fn new() -> TerminalBars {
        TerminalBars {
            current: Mutex::new(None),
        }
    }
}

impl Default for TerminalBars {
    fn default() -> Self {
        Self::new()
    }
}

impl Sink for TerminalBars {
    fn begin(&self, task: Task, total: u64) {
        if let Ok(mut c) = self.current.lock() {
            if let Some(old) = c.take().and_then(|o| o.bar) {
                old.finish_and_clear();
            }
            *c = Some(Current {
                task,
                total,
                started: Instant::now(),
                bar: None,
            });
        }
    }

    fn set(&self, done: u64) {
        let Ok(mut guard) = self.current.lock() else {
            return;
        };
        let Some(c) = guard.as_mut() else {
            return;
        };
        if c.bar.is_none() && c.started.elapsed() >= DELAY {
            let bar =
                ProgressBar::with_draw_target(Some(c.total), ProgressDrawTarget::stderr_with_hz(4));
            if let Ok(style) = ProgressStyle::with_template(
                "{msg:>20} [{bar:30}] {pos}/{len} ({elapsed} so far, about {eta} left)",
            ) {
                bar.set_style(style.progress_chars("=> "));
            }
            bar.set_message(label(c.task));
            c.bar = Some(bar);
        }
        if let Some(bar) = &c.bar {
            bar.set_position(done);
        }
    }

    fn end(&self) {
        if let Ok(mut c) = self.current.lock()
            && let Some(bar) = c.take().and_then(|o| o.bar)
        {
            bar.finish_and_clear();
        }
    }
}
