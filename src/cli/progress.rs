//! Progress of a long command on stderr: drawn only when stderr is a terminal and the work has
//! run for a moment (indicatif's bar, hidden otherwise), so pipes, files and `--json` output
//! never receive a progress byte. The library reports finished work through a `tick` callback
//! (`ladderfan::sweep::run_with` and the other `*_with` functions); this file only draws it.

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use std::io::IsTerminal;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

/// How long a command runs before its bar appears: shorter runs stay silent.
const SHOW_AFTER: Duration = Duration::from_millis(800);

/// [`SHOW_AFTER`], or the milliseconds of `LADDERFAN_PROGRESS_AFTER_MS` (0: at once; the
/// terminal test uses it, and so may a user who wants every bar).
fn show_after() -> Duration {
    std::env::var("LADDERFAN_PROGRESS_AFTER_MS")
        .ok()
        .and_then(|v| v.trim().parse::<u64>().ok())
        .map_or(SHOW_AFTER, Duration::from_millis)
}

/// A progress bar over `len` steps that draws itself on stderr once [`show_after`] has passed,
/// and only when stderr is a terminal.
pub struct Progress {
    bar: ProgressBar,
    start: Instant,
    after: Duration,
    shown: AtomicBool,
    terminal: bool,
}

impl Progress {
    /// A bar for `len` steps of `what` (e.g. `fan`), counting `unit` (e.g. `points`).
    pub fn new(what: &str, len: usize, unit: &str) -> Self {
        let bar = ProgressBar::hidden();
        bar.set_length(len as u64);
        // a template error would be ours; the bar then shows the default style
        if let Ok(style) = ProgressStyle::with_template(&format!(
            "{{msg}} [{{bar:40}}] {{pos}}/{{len}} {unit}, eta {{eta}}"
        )) {
            bar.set_style(style.progress_chars("=> "));
        }
        bar.set_message(what.to_string());
        Progress {
            bar,
            start: Instant::now(),
            after: show_after(),
            shown: AtomicBool::new(false),
            terminal: std::io::stderr().is_terminal(),
        }
    }

    /// A counter of steps whose number is not known in advance (e.g. the cutoffs an automatic
    /// run tries), counting `unit`.
    pub fn open_ended(what: &str, unit: &str) -> Self {
        let p = Progress::new(what, 0, unit);
        if let Ok(style) = ProgressStyle::with_template(&format!(
            "{{msg}} {{spinner}} {{pos}} {unit}, {{elapsed}}"
        )) {
            p.bar.set_style(style);
        }
        p
    }

    /// Run `work` on this thread while a spinner with the elapsed time is drawn (on the same
    /// terms as every bar: stderr a terminal, after [`show_after`]), for one long library call
    /// that reports no steps of its own; the spinner is removed before this returns.
    pub fn while_running<T>(what: &str, work: impl FnOnce() -> T) -> T {
        let p = Progress::new(what, 0, "");
        if let Ok(style) = ProgressStyle::with_template("{msg} {spinner} {elapsed}") {
            p.bar.set_style(style);
        }
        // the spinner waits on a channel rather than sleeping, so that it ends as soon as the
        // work does (a sleep of 100 ms held the command up to 100 ms after its work)
        let (done, wait) = std::sync::mpsc::channel::<()>();
        let bar = &p;
        let out = std::thread::scope(|scope| {
            scope.spawn(move || loop {
                bar.tick();
                // Err(Disconnected) when the work is done (its sender dropped)
                if wait.recv_timeout(Duration::from_millis(100))
                    != Err(std::sync::mpsc::RecvTimeoutError::Timeout)
                {
                    break;
                }
            });
            let out = work();
            drop(done);
            out
        });
        p.finish();
        out
    }

    /// One step done (callable from any worker thread).
    pub fn tick(&self) {
        self.bar.inc(1);
        if self.terminal
            && self.start.elapsed() >= self.after
            && self
                .shown
                .compare_exchange(false, true, Ordering::SeqCst, Ordering::SeqCst)
                .is_ok()
        {
            self.bar.set_draw_target(ProgressDrawTarget::stderr());
            // draw now: the next step may never come (a spinner's work can end first)
            self.bar.tick();
        }
    }

    /// The time since the bar was made.
    pub fn elapsed(&self) -> Duration {
        self.start.elapsed()
    }

    /// Remove the bar (if drawn) before the command prints its result.
    pub fn finish(&self) {
        self.bar.finish_and_clear();
    }
}
