//! A progress bar for studies, on standard error.
//!
//! The bar counts cell updates. Each run announces the most it can take
//! (its planned maximum length); runs not yet started are counted at the
//! mean of those announced so far; a run that stops early (its modes have
//! settled) takes its unused part off the total. The ETA is therefore an
//! upper estimate that shortens as runs finish early. The bar draws only
//! when standard error is a terminal (indicatif's own rule), and never when
//! hidden (`--quiet`).
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use lathe_solver::Progress;
use std::sync::Mutex;
use std::time::Duration;

/// A [`Progress`] shown as a terminal bar with elapsed time and ETA.
#[derive(Debug)]
pub struct Bar {
    bar: ProgressBar,
    state: Mutex<State>,
}

#[derive(Debug, Default)]
struct State {
    runs: usize,
    started: usize,
    finished: usize,
    planned: u64,
    saved: u64,
}

impl Bar {
    /// A bar for `runs` runs; `hidden` draws nothing at all.
    pub fn new(runs: usize, hidden: bool) -> Bar {
        let target = if hidden {
            ProgressDrawTarget::hidden()
        } else {
            ProgressDrawTarget::stderr()
        };
        let bar = ProgressBar::with_draw_target(Some(1), target);
        bar.set_style(
            ProgressStyle::with_template(
                "{spinner} {elapsed_precise} [{wide_bar}] {percent:>3}%  ETA {eta}  {msg}",
            )
            .expect("a valid template")
            .progress_chars("=> "),
        );
        bar.enable_steady_tick(Duration::from_millis(200));
        Bar {
            bar,
            state: Mutex::new(State {
                runs,
                ..State::default()
            }),
        }
    }

    /// Clears the bar from the terminal.
    pub fn finish(&self) {
        self.bar.finish_and_clear();
    }

    /// Runs `f` with the bar suspended, so lines printed by `f` stay whole.
    pub fn suspend<R>(&self, f: impl FnOnce() -> R) -> R {
        self.bar.suspend(f)
    }

    fn relength(&self, s: &State) {
        let mean = s.planned / s.started.max(1) as u64;
        let waiting = s.runs.saturating_sub(s.started) as u64;
        let total = (s.planned + waiting * mean).saturating_sub(s.saved);
        self.bar.set_length(total.max(self.bar.position()).max(1));
        self.bar
            .set_message(format!("runs {}/{} done", s.finished, s.runs));
    }
}

impl Progress for Bar {
    fn started(&self, _m: u32, planned: u64) {
        let mut s = self.state.lock().expect("progress state");
        s.started += 1;
        s.planned += planned;
        self.relength(&s);
    }

    fn advance(&self, _m: u32, cell_updates: u64) {
        self.bar.inc(cell_updates);
    }

    fn finished(&self, _m: u32, done: u64, planned: u64) {
        let mut s = self.state.lock().expect("progress state");
        s.finished += 1;
        // The run's own reports come every 64 steps: settle its count exactly.
        s.saved += planned.saturating_sub(done);
        self.relength(&s);
    }
}
