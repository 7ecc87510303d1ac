//! Scenes computed off the UI thread.
//!
//! The UI hands the worker a compiled model and a [`SceneRequest`]; each new request cancels
//! the one in flight through its [`Cancel`] flag, and every result carries the generation of
//! its request so that a slow, older scene can never replace a newer one on screen. Tests use
//! [`SceneSource::synchronous`], which computes in place so assertions see the finished scene.

use std::sync::mpsc::{self, Receiver, Sender};
use std::time::{Duration, Instant};

use quarry_core::model::{Model, ModelSpec};
use quarry_core::scene::{Cancel, Scene, SceneRequest, build_scene};

/// A finished scene and where it came from.
#[derive(Clone, Debug)]
pub struct ShownScene {
    /// The generation of the request it answers.
    pub generation: u64,
    /// The scene.
    pub scene: Scene,
    /// How long it took to compute.
    pub elapsed: Duration,
}

/// One request for the worker.
struct Job {
    generation: u64,
    model: Model,
    request: SceneRequest,
    cancel: Cancel,
}

/// The background thread and its channels.
struct Worker {
    jobs: Sender<Job>,
    results: Receiver<ShownScene>,
    /// The flag of the newest job, cancelled when a newer one is sent.
    in_flight: Cancel,
}

impl Worker {
    fn spawn(repaint: egui::Context) -> Option<Self> {
        let (jobs, job_rx) = mpsc::channel::<Job>();
        let (result_tx, results) = mpsc::channel();
        std::thread::Builder::new()
            .name("quarry-scene".into())
            .spawn(move || worker_loop(&job_rx, &result_tx, &repaint))
            .ok()?;
        Some(Self {
            jobs,
            results,
            in_flight: Cancel::new(),
        })
    }
}

/// Takes jobs until the app goes away; skips straight to the newest one when several wait.
fn worker_loop(jobs: &Receiver<Job>, results: &Sender<ShownScene>, repaint: &egui::Context) {
    while let Ok(mut job) = jobs.recv() {
        while let Ok(newer) = jobs.try_recv() {
            job = newer;
        }
        if job.cancel.is_cancelled() {
            continue;
        }
        let start = Instant::now();
        if let Ok(scene) = build_scene(&job.model, &job.request, &job.cancel) {
            let done = ShownScene {
                generation: job.generation,
                scene,
                elapsed: start.elapsed(),
            };
            if results.send(done).is_err() {
                return;
            }
            repaint.request_repaint();
        }
    }
}

/// Where the app's scenes come from: a worker thread, or (for tests) the calling thread.
pub struct SceneSource {
    worker: Option<Worker>,
    /// The generation of the newest request.
    generation: u64,
    /// What was last asked for, so an unchanged scenario sends nothing.
    asked: Option<(ModelSpec, SceneRequest)>,
    /// The newest finished scene.
    shown: Option<ShownScene>,
}

impl SceneSource {
    /// Scenes computed on a background thread that repaints `ctx` when one is done. Falls back
    /// to computing in place if the thread cannot be started.
    pub fn background(ctx: egui::Context) -> Self {
        Self {
            worker: Worker::spawn(ctx),
            generation: 0,
            asked: None,
            shown: None,
        }
    }

    /// Scenes computed in place, before [`SceneSource::request`] returns.
    pub fn synchronous() -> Self {
        Self {
            worker: None,
            generation: 0,
            asked: None,
            shown: None,
        }
    }

    /// Asks for the scene of `model` under `request`, unless that is what was last asked.
    pub fn request(&mut self, model: &Model, request: &SceneRequest) {
        let key = (model.spec().clone(), request.clone());
        if self.asked.as_ref() == Some(&key) {
            return;
        }
        self.asked = Some(key);
        self.generation += 1;
        let generation = self.generation;
        match &mut self.worker {
            Some(worker) => {
                worker.in_flight.cancel();
                worker.in_flight = Cancel::new();
                let job = Job {
                    generation,
                    model: model.clone(),
                    request: request.clone(),
                    cancel: worker.in_flight.clone(),
                };
                if worker.jobs.send(job).is_err() {
                    // The thread is gone: compute here from now on.
                    self.worker = None;
                    self.compute_here(model, request, generation);
                }
            }
            None => self.compute_here(model, request, generation),
        }
    }

    fn compute_here(&mut self, model: &Model, request: &SceneRequest, generation: u64) {
        let start = Instant::now();
        if let Ok(scene) = build_scene(model, request, &Cancel::new()) {
            self.accept(ShownScene {
                generation,
                scene,
                elapsed: start.elapsed(),
            });
        }
    }

    /// Takes whatever the worker has finished.
    pub fn poll(&mut self) {
        let mut finished = Vec::new();
        if let Some(worker) = &self.worker {
            while let Ok(done) = worker.results.try_recv() {
                finished.push(done);
            }
        }
        for done in finished {
            self.accept(done);
        }
    }

    /// Shows a finished scene unless a newer one is already shown.
    fn accept(&mut self, done: ShownScene) {
        let newer = self
            .shown
            .as_ref()
            .is_none_or(|s| done.generation > s.generation);
        if newer {
            self.shown = Some(done);
        }
    }

    /// The newest finished scene.
    pub fn shown(&self) -> Option<&ShownScene> {
        self.shown.as_ref()
    }

    /// Whether a newer scene than the one shown is being computed.
    pub fn is_busy(&self) -> bool {
        self.shown
            .as_ref()
            .is_none_or(|s| s.generation < self.generation)
    }
}

impl Drop for SceneSource {
    fn drop(&mut self) {
        if let Some(worker) = &self.worker {
            worker.in_flight.cancel();
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn model() -> Model {
        Model::new(&quarry_core::library::default_model()).expect("built-in model compiles")
    }

    #[test]
    fn a_stale_scene_is_never_shown_over_a_newer_one() {
        let mut source = SceneSource::synchronous();
        let mut m = model();
        source.request(&m, &SceneRequest::default());
        m.set_param("c", 3.0).expect("c exists");
        source.request(&m, &SceneRequest::default());
        let newest = source.shown().map(|s| s.generation);
        assert_eq!(newest, Some(2));
        let stale = ShownScene {
            generation: 1,
            scene: Scene::default(),
            elapsed: Duration::ZERO,
        };
        source.accept(stale);
        assert_eq!(source.shown().map(|s| s.generation), Some(2));
        assert!(!source.is_busy());
    }

    #[test]
    fn the_background_worker_delivers_the_newest_scene() {
        let mut source = SceneSource::background(egui::Context::default());
        let mut m = model();
        for c in [1.0, 2.0, 3.0] {
            m.set_param("c", c).expect("c exists");
            source.request(&m, &SceneRequest::default());
        }
        let deadline = Instant::now() + Duration::from_secs(60);
        while source.is_busy() && Instant::now() < deadline {
            std::thread::sleep(Duration::from_millis(5));
            source.poll();
        }
        let shown = source.shown().expect("a scene arrives");
        assert_eq!(shown.generation, 3);
        let coexistence = shown
            .scene
            .equilibria
            .iter()
            .find(|e| e.x > 1.0 && e.y > 1.0)
            .expect("coexistence equilibrium");
        // c/γ = 3/0.075 = 40, a/α = 1/0.1 = 10.
        assert!((coexistence.x - 40.0).abs() < 1e-6);
        assert!((coexistence.y - 10.0).abs() < 1e-6);
    }
}
