//! Long computations (sweeps, yield curves) on a thread of their own, with progress and a
//! cancel flag, so the plane stays live meanwhile. Tests run them in place.

use std::sync::Arc;
use std::sync::atomic::{AtomicBool, AtomicU32, Ordering};
use std::sync::mpsc::{self, Receiver, TryRecvError};
use std::time::{Duration, Instant};

/// A computation running in the background, or already finished.
#[derive(Debug)]
pub struct Job<T> {
    cancel: Arc<AtomicBool>,
    /// Progress in [0, 1] as the bits of an f32.
    progress: Arc<AtomicU32>,
    rx: Option<Receiver<T>>,
    ready: Option<T>,
    started: Instant,
}

impl<T: Send + 'static> Job<T> {
    /// Starts `work` on its own thread (repainting `ctx` as it goes and when done), or runs
    /// it in place when `ctx` is `None`. `work` gets a cancel test and a progress callback.
    pub fn start<F>(ctx: Option<egui::Context>, work: F) -> Self
    where
        F: FnOnce(&dyn Fn() -> bool, &dyn Fn(f32)) -> T + Send + 'static,
    {
        let cancel = Arc::new(AtomicBool::new(false));
        let progress = Arc::new(AtomicU32::new(0f32.to_bits()));
        let mut job = Self {
            cancel: cancel.clone(),
            progress: progress.clone(),
            rx: None,
            ready: None,
            started: Instant::now(),
        };
        let Some(ctx) = ctx else {
            let value = work(&|| cancel.load(Ordering::Relaxed), &|f| {
                progress.store(f.to_bits(), Ordering::Relaxed)
            });
            job.ready = Some(value);
            return job;
        };
        let (tx, rx) = mpsc::channel();
        let spawned = std::thread::Builder::new()
            .name("quarry-job".into())
            .spawn(move || {
                let repaint = ctx.clone();
                let last = std::sync::Mutex::new(Instant::now());
                let value = work(&|| cancel.load(Ordering::Relaxed), &|f| {
                    progress.store(f.to_bits(), Ordering::Relaxed);
                    // Repaint for the progress bar, at most 20 times a second.
                    if let Ok(mut last) = last.lock()
                        && last.elapsed() > Duration::from_millis(50)
                    {
                        *last = Instant::now();
                        repaint.request_repaint();
                    }
                });
                let _ = tx.send(value);
                ctx.request_repaint();
            });
        if spawned.is_ok() {
            job.rx = Some(rx);
        }
        job
    }

    /// The result once it is there (taken: later calls return `None`).
    pub fn take(&mut self) -> Option<T> {
        if let Some(v) = self.ready.take() {
            return Some(v);
        }
        let rx = self.rx.as_ref()?;
        match rx.try_recv() {
            Ok(v) => {
                self.rx = None;
                Some(v)
            }
            Err(TryRecvError::Empty) => None,
            Err(TryRecvError::Disconnected) => {
                self.rx = None;
                None
            }
        }
    }

    /// Whether the job is still running.
    pub fn is_running(&self) -> bool {
        self.rx.is_some()
    }

    /// Asks the job to stop; it returns (with a "cancelled" result) soon after.
    pub fn cancel(&self) {
        self.cancel.store(true, Ordering::Relaxed);
    }

    /// Progress in [0, 1].
    pub fn progress(&self) -> f32 {
        f32::from_bits(self.progress.load(Ordering::Relaxed)).clamp(0.0, 1.0)
    }

    /// How long the job has run.
    pub fn elapsed(&self) -> Duration {
        self.started.elapsed()
    }

    /// A progress bar with a Cancel button, in one row; `add` puts more in the row.
    pub fn progress_ui(&self, ui: &mut egui::Ui, add: impl FnOnce(&mut egui::Ui)) {
        ui.horizontal(|ui| {
            ui.add(
                egui::ProgressBar::new(self.progress())
                    .show_percentage()
                    .desired_width(260.0),
            );
            if ui.button("Cancel").clicked() {
                self.cancel();
            }
            add(ui);
        });
    }
}

impl<T> Drop for Job<T> {
    fn drop(&mut self) {
        // A job nobody waits for has no reason to keep a core busy.
        self.cancel.store(true, Ordering::Relaxed);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_background_job_reports_progress_and_can_be_cancelled() {
        let ctx = egui::Context::default();
        let mut job = Job::start(Some(ctx), |cancelled, progress| {
            for k in 0..10_000 {
                progress(k as f32 / 10_000.0);
                if cancelled() {
                    return Err(k);
                }
                std::thread::sleep(Duration::from_millis(1));
            }
            Ok(())
        });
        std::thread::sleep(Duration::from_millis(30));
        assert!(job.is_running());
        assert!(job.progress() > 0.0);
        job.cancel();
        let deadline = Instant::now() + Duration::from_secs(5);
        let result = loop {
            if let Some(r) = job.take() {
                break r;
            }
            assert!(Instant::now() < deadline, "the job did not stop");
            std::thread::sleep(Duration::from_millis(5));
        };
        assert!(result.is_err(), "stopped early");
        assert!(!job.is_running());
    }

    #[test]
    fn a_job_without_a_context_runs_in_place() {
        let mut job = Job::start(None, |_, progress| {
            progress(1.0);
            42
        });
        assert_eq!(job.progress(), 1.0);
        assert_eq!(job.take(), Some(42));
        assert_eq!(job.take(), None);
    }
}
