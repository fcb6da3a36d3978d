//! Progress bars on stderr for the library's events, and Ctrl-C asking
//! long work to stop and keep what it has.

use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Mutex, OnceLock};

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

use sliceplan::command::Event;

/// The flag Ctrl-C sets; the handler is installed once per process.
fn interrupt_flag() -> Arc<AtomicBool> {
    static FLAG: OnceLock<Arc<AtomicBool>> = OnceLock::new();
    FLAG.get_or_init(|| {
        let flag = Arc::new(AtomicBool::new(false));
        let setter = flag.clone();
        // Without a handler (e.g. one is already set) Ctrl-C just ends the
        // process, which loses only the work in progress.
        let _ = ctrlc::set_handler(move || setter.store(true, Ordering::SeqCst));
        flag
    })
    .clone()
}

/// Bars for one command: a search bar (by trials or by time), a spinner
/// while slicing, a slice bar while running. Drawn only when stderr is a
/// terminal.
pub struct Bars {
    stop: Arc<AtomicBool>,
    bar: Mutex<Option<ProgressBar>>,
    /// The search's trial budget (a bar by trials) or time budget in ms.
    search_len: (Option<u64>, u64),
}

impl Bars {
    /// Bars for a command whose search (if any) has these budgets.
    pub fn new(trials: Option<u64>, time_ms: u64) -> Bars {
        let stop = interrupt_flag();
        stop.store(false, Ordering::SeqCst);
        Bars {
            stop,
            bar: Mutex::new(None),
            search_len: (trials, time_ms),
        }
    }

    /// The stop flag for [`sliceplan::command::Hooks`].
    pub fn stop(&self) -> &AtomicBool {
        &self.stop
    }

    fn start(&self, len: u64, template: &str) -> ProgressBar {
        let bar = ProgressBar::new(len);
        bar.set_draw_target(ProgressDrawTarget::stderr());
        if let Ok(style) = ProgressStyle::with_template(template) {
            bar.set_style(style);
        }
        bar
    }

    fn finish(&self) {
        if let Some(b) = self.bar.lock().expect("no panic holds the bar").take() {
            b.finish_and_clear();
        }
    }

    /// Turns a library event into bar updates.
    pub fn on(&self, event: Event<'_>) {
        let mut guard = self.bar.lock().expect("no panic holds the bar");
        match event {
            Event::Search(p) => {
                let bar = guard.get_or_insert_with(|| {
                    let (trials, ms) = self.search_len;
                    self.start(
                        trials.unwrap_or(ms),
                        "{spinner} [{elapsed_precise}] {wide_bar} {msg}",
                    )
                });
                if self.search_len.0.is_some() {
                    bar.set_position(p.trials_done);
                } else {
                    bar.set_position(p.elapsed.as_millis() as u64);
                }
                let rate = p.trials_done as f64 / p.elapsed.as_secs_f64().max(1e-9);
                if let Some(b) = &p.best {
                    bar.set_message(format!(
                        "best: 2^{:.2} ops, width {:.2} | {} trials, {:.0}/s",
                        b.total_ops_log2, b.width, p.trials_done, rate
                    ));
                }
            }
            Event::SlicingStarted { targets } => {
                if let Some(b) = guard.take() {
                    b.finish_and_clear();
                }
                let bar = self.start(0, "{spinner} {msg}");
                bar.set_message(format!("choosing slices for {targets} target(s)"));
                bar.enable_steady_tick(std::time::Duration::from_millis(120));
                *guard = Some(bar);
            }
            Event::SlicingDone => {
                if let Some(b) = guard.take() {
                    b.finish_and_clear();
                }
            }
            Event::Run(p) => {
                use sliceplan::exec::Progress;
                let bar = guard.get_or_insert_with(|| {
                    self.start(0, "{bar:40} {pos}/{len} slices  {per_sec}  eta {eta}")
                });
                match p {
                    Progress::Begin { slices, .. } => bar.set_length(slices),
                    Progress::Slices(n) => bar.inc(n),
                    Progress::ChunkDone { .. } => {}
                }
            }
            Event::Calibrate(p) => {
                let bar = guard.get_or_insert_with(|| {
                    self.start(
                        p.total as u64,
                        "{bar:40} {pos}/{len} timings  eta {eta}  {msg}",
                    )
                });
                bar.set_position(p.done as u64);
                bar.set_message(p.what.to_string());
            }
        }
    }
}

impl Drop for Bars {
    fn drop(&mut self) {
        self.finish();
    }
}
