//! The sweep view: equilibria followed over a range of one parameter, drawn as a branch
//! diagram (stable branches solid, unstable dashed), bifurcation points marked and listed.
//! Clicking the diagram, or "Set" beside a bifurcation, sets the parameter in the plane. The
//! sweep runs on its own thread with a progress bar and a Cancel button.

use egui::{Button, DragValue, RichText, Ui};
use egui_plot::{Corner, Legend, Line, LineStyle, MarkerShape, Plot, Points, VLine};
use quarry_core::model::Model;
use quarry_core::sweep::{BifurcationKind, BranchEnd, Sweep, SweepError, SweepOptions, sweep};

use crate::command::Command;
use crate::job::Job;
use crate::scenario::Scenario;
use crate::style::{self, num};

/// Grid values a new sweep starts with.
pub const DEFAULT_STEPS: usize = 200;
/// Limit cycles sampled past each Hopf point for the amplitude curves.
pub const CYCLE_SAMPLES: usize = 16;

pub use quarry_core::linear::Stability;

/// The parameter values of the last points inside the window of branches that leave it,
/// sorted.
pub fn window_exits(sweep: &Sweep) -> Vec<f64> {
    let mut out: Vec<f64> = sweep
        .branches
        .iter()
        .flat_map(|b| {
            let first = (b.start == BranchEnd::LeftWindow)
                .then(|| b.points.first().map(|p| p.value))
                .flatten();
            let last = (b.end == BranchEnd::LeftWindow)
                .then(|| b.points.last().map(|p| p.value))
                .flatten();
            first.into_iter().chain(last)
        })
        .collect();
    out.sort_by(f64::total_cmp);
    out
}

/// One run of a branch with the same stability: parameter value and the chosen variable.
#[derive(Clone, Debug, PartialEq)]
pub struct Run {
    /// Its stability.
    pub stability: Stability,
    /// `[value, variable]` points.
    pub points: Vec<[f64; 2]>,
}

/// Splits every branch where its stability changes; each run shares its first point with the
/// end of the run before, so the curve stays joined.
pub fn runs(sweep: &Sweep, variable: usize) -> Vec<Run> {
    let mut out = Vec::new();
    for b in &sweep.branches {
        let mut current: Option<Run> = None;
        for p in &b.points {
            let s = p.linear.class.stability();
            let pt = [p.value, if variable == 0 { p.x } else { p.y }];
            match &mut current {
                Some(run) if run.stability == s => run.points.push(pt),
                _ => {
                    let mut points = Vec::new();
                    if let Some(prev) = current.take() {
                        if let Some(last) = prev.points.last() {
                            points.push(*last);
                        }
                        out.push(prev);
                    }
                    points.push(pt);
                    current = Some(Run {
                        stability: s,
                        points,
                    });
                }
            }
        }
        out.extend(current);
    }
    out
}

/// Points `[parameter, value]` of one curve of the diagram.
pub type Curve = Vec<[f64; 2]>;

/// The limit cycles' smallest and largest values of `variable` against the parameter, one
/// pair of curves per Hopf point, for cycles that attract (`stable`) or repel.
pub fn cycle_curves(sweep: &Sweep, variable: usize, stable: bool) -> Vec<(Curve, Curve)> {
    let mut groups: Vec<(f64, Vec<&quarry_core::sweep::CycleSample>)> = Vec::new();
    for c in sweep.cycles.iter().filter(|c| c.stable == stable) {
        match groups.iter_mut().find(|(h, _)| *h == c.hopf_value) {
            Some((_, g)) => g.push(c),
            None => groups.push((c.hopf_value, vec![c])),
        }
    }
    groups
        .into_iter()
        .map(|(_, mut g)| {
            g.sort_by(|a, b| a.value.total_cmp(&b.value));
            let min = g.iter().map(|c| [c.value, c.min[variable]]).collect();
            let max = g.iter().map(|c| [c.value, c.max[variable]]).collect();
            (min, max)
        })
        .collect()
}

/// What a finished sweep was run on.
#[derive(Clone, Debug)]
struct Done {
    sweep: Sweep,
    /// Variable names then.
    variables: [String; 2],
    millis: f64,
}

/// The sweep view's settings, the running job and the last result.
#[derive(Debug)]
pub struct SweepView {
    /// The swept parameter's name.
    pub param: String,
    /// Range and grid.
    pub from: f64,
    /// End of the range.
    pub to: f64,
    /// Grid values, both ends included.
    pub steps: usize,
    /// Which variable is on the vertical axis.
    pub variable: usize,
    job: Option<Job<Result<Sweep, SweepError>>>,
    done: Option<Done>,
    error: Option<String>,
}

impl Default for SweepView {
    fn default() -> Self {
        Self {
            param: String::new(),
            from: 0.0,
            to: 1.0,
            steps: DEFAULT_STEPS,
            variable: 0,
            job: None,
            done: None,
            error: None,
        }
    }
}

impl SweepView {
    /// The last finished sweep.
    pub fn result(&self) -> Option<&Sweep> {
        self.done.as_ref().map(|d| &d.sweep)
    }

    /// Whether a sweep is running.
    pub fn is_running(&self) -> bool {
        self.job.as_ref().is_some_and(Job::is_running)
    }

    /// Chooses the parameter, with the range of its slider.
    pub fn choose(&mut self, scenario: &Scenario, name: &str) {
        self.param = name.to_owned();
        if let Some(i) = scenario.spec.parameters.iter().position(|p| p.name == name)
            && let Some(s) = scenario.params.get(i)
        {
            (self.from, self.to) = s.slider_range();
        } else if let Some(p) = scenario
            .compile()
            .ok()
            .and_then(|m| m.spec().parameters.iter().find(|p| p.name == name).cloned())
        {
            (self.from, self.to) = if p.value > 0.0 {
                (0.0, 2.0 * p.value)
            } else {
                (0.0, 1.0)
            };
        }
    }

    /// Starts a sweep of the current settings on `model` (in place when `ctx` is `None`).
    pub fn start(&mut self, model: &Model, ctx: Option<egui::Context>) {
        let mut opts = SweepOptions::new(&self.param, self.from, self.to, self.steps);
        opts.cycle_samples = CYCLE_SAMPLES;
        let model = model.clone();
        self.error = None;
        self.job = Some(Job::start(ctx, move |cancelled, progress| {
            sweep(&model, &opts, cancelled, progress)
        }));
    }

    fn poll(&mut self, model: &Model) {
        let Some(job) = &mut self.job else { return };
        let millis = job.elapsed().as_secs_f64() * 1000.0;
        let Some(result) = job.take() else { return };
        self.job = None;
        match result {
            Ok(sweep) => {
                let [x, y] = model.variables();
                self.done = Some(Done {
                    sweep,
                    variables: [x.to_owned(), y.to_owned()],
                    millis,
                });
            }
            Err(SweepError::Cancelled) => self.error = Some("Cancelled.".into()),
            Err(e) => self.error = Some(format!("The sweep could not run: {e}")),
        }
    }

    /// Draws the settings, the progress, the diagram and the list.
    pub fn ui(
        &mut self,
        ui: &mut Ui,
        scenario: &Scenario,
        model: &Model,
        ctx: Option<egui::Context>,
        out: &mut Vec<Command>,
    ) {
        self.poll(model);
        let names: Vec<String> = model
            .spec()
            .parameters
            .iter()
            .map(|p| p.name.clone())
            .collect();
        if !names.contains(&self.param)
            && let Some(first) = names.first()
        {
            let first = first.clone();
            self.choose(scenario, &first);
        }
        ui.horizontal_wrapped(|ui| {
            let l = ui.label("Sweep");
            let mut chosen = None;
            egui::ComboBox::from_id_salt("sweep-param")
                .selected_text(self.param.as_str())
                .show_ui(ui, |ui| {
                    for n in &names {
                        if ui.selectable_label(*n == self.param, n).clicked() {
                            chosen = Some(n.clone());
                        }
                    }
                })
                .response
                .labelled_by(l.id);
            if let Some(n) = chosen {
                self.choose(scenario, &n);
            }
            let l = ui.label("from");
            let r = ui
                .add(DragValue::new(&mut self.from).speed(0.01))
                .labelled_by(l.id);
            style::accessible_name(ui, &r, "sweep from");
            let l = ui.label("to");
            let r = ui
                .add(DragValue::new(&mut self.to).speed(0.01))
                .labelled_by(l.id);
            style::accessible_name(ui, &r, "sweep to");
            let l = ui.label("values");
            let r = ui
                .add(DragValue::new(&mut self.steps).range(2..=100_000))
                .labelled_by(l.id);
            style::accessible_name(ui, &r, "sweep values");
            let l = ui.label("plot");
            let [xn, yn] = model.variables();
            egui::ComboBox::from_id_salt("sweep-variable")
                .selected_text(if self.variable == 0 { xn } else { yn })
                .show_ui(ui, |ui| {
                    ui.selectable_value(&mut self.variable, 0, xn);
                    ui.selectable_value(&mut self.variable, 1, yn);
                })
                .response
                .labelled_by(l.id);
            let running = self.is_running();
            let valid = self.from.is_finite() && self.to.is_finite() && self.from != self.to;
            if ui
                .add_enabled(!running && valid, Button::new("Run sweep"))
                .clicked()
            {
                self.start(model, ctx.clone());
                self.poll(model);
            }
        });
        if let Some(job) = &self.job {
            job.progress_ui(ui, |ui| {
                ui.weak("The plane stays live while the sweep runs.");
            });
        }
        if let Some(e) = &self.error {
            ui.colored_label(style::ERROR, e);
        }
        let Some(done) = &self.done else {
            ui.weak("Choose a parameter and a range, then run the sweep.");
            return;
        };
        let sweep = &done.sweep;
        ui.weak(format!(
            "{} branches, {} bifurcations, {} values of {} in {:.0} ms{}",
            sweep.branches.len(),
            sweep.bifurcations.len(),
            sweep.points.len(),
            sweep.param,
            done.millis,
            if sweep.branches_truncated {
                " (branch limit reached: not every branch followed)"
            } else {
                ""
            }
        ));
        let exits = window_exits(sweep);
        if !exits.is_empty() {
            let at: Vec<String> = exits.iter().map(|v| num(*v)).collect();
            ui.weak(format!(
                "A branch leaves the window after {} = {} (widen the window to follow it).",
                sweep.param,
                at.join(", ")
            ));
        }
        let current = model.param(&sweep.param);
        let var_name = done.variables[self.variable].clone();
        let response = Plot::new("sweep-diagram")
            .custom_x_axes(style::x_axis(sweep.param.as_str()))
            .y_axis_label(format!("{var_name} at equilibrium"))
            .height((ui.available_height() - 120.0).max(180.0))
            .show_crosshair(false)
            .label_formatter(|_| None)
            .legend(Legend::default().position(Corner::RightTop))
            .show(ui, |pui| {
                for run in runs(sweep, self.variable) {
                    let (name, st) = match run.stability {
                        Stability::Stable => ("stable", LineStyle::Solid),
                        Stability::Unstable => ("unstable", LineStyle::Dashed { length: 8.0 }),
                        Stability::Neutral => {
                            ("neutral (centre)", LineStyle::Dotted { spacing: 4.0 })
                        }
                    };
                    let colour = match run.stability {
                        Stability::Stable => egui::Color32::from_rgb(21, 94, 117),
                        Stability::Unstable => egui::Color32::from_rgb(190, 80, 40),
                        Stability::Neutral => egui::Color32::from_gray(90),
                    };
                    pui.line(
                        Line::new(name, run.points)
                            .color(colour)
                            .width(2.2)
                            .style(st)
                            .allow_hover(false),
                    );
                }
                for (stable, name, st) in [
                    (true, "limit cycle min/max (attracting)", LineStyle::Solid),
                    (
                        false,
                        "limit cycle min/max (repelling)",
                        LineStyle::Dashed { length: 6.0 },
                    ),
                ] {
                    for (min, max) in cycle_curves(sweep, self.variable, stable) {
                        for pts in [min, max] {
                            pui.line(
                                Line::new(name, pts)
                                    .color(egui::Color32::from_rgb(17, 24, 39))
                                    .width(1.6)
                                    .style(st)
                                    .allow_hover(false),
                            );
                        }
                    }
                }
                for kind in [
                    BifurcationKind::Fold,
                    BifurcationKind::Transcritical,
                    BifurcationKind::Hopf,
                ] {
                    let pts: Vec<[f64; 2]> = sweep
                        .bifurcations
                        .iter()
                        .filter(|b| b.kind == kind)
                        .map(|b| [b.value, if self.variable == 0 { b.x } else { b.y }])
                        .collect();
                    if pts.is_empty() {
                        continue;
                    }
                    let (shape, colour) = bifurcation_marker(kind);
                    pui.points(
                        Points::new(kind_name(kind), pts)
                            .shape(shape)
                            .color(colour)
                            .filled(true)
                            .radius(6.0),
                    );
                }
                if let Some(v) = current {
                    pui.vline(
                        VLine::new(format!("{} now", sweep.param), v)
                            .color(style::CURRENT_VALUE)
                            .style(LineStyle::Dashed { length: 6.0 })
                            .width(1.5),
                    );
                }
                pui.pointer_coordinate().map(|p| p.x)
            });
        let r = response
            .response
            .on_hover_text_at_pointer(format!("Click: set {} here in the plane", sweep.param));
        if r.clicked()
            && let Some(v) = response.inner
        {
            set_param(scenario, &sweep.param, v, out);
        }
        ui.add_space(4.0);
        if sweep.bifurcations.is_empty() {
            ui.weak("No fold, transcritical or Hopf point in this range.");
            return;
        }
        let [xn, yn] = &done.variables;
        egui::Grid::new("bifurcations")
            .striped(true)
            .num_columns(5)
            .show(ui, |ui| {
                for h in ["kind", &sweep.param, xn, yn, ""] {
                    ui.label(RichText::new(h).strong());
                }
                ui.end_row();
                for b in &sweep.bifurcations {
                    ui.label(kind_name(b.kind));
                    ui.label(RichText::new(num(b.value)).monospace());
                    ui.label(RichText::new(num(b.x)).monospace());
                    ui.label(RichText::new(num(b.y)).monospace());
                    if ui
                        .button("Set")
                        .on_hover_text(format!(
                            "Set {} = {} in the plane",
                            sweep.param,
                            num(b.value)
                        ))
                        .clicked()
                    {
                        set_param(scenario, &sweep.param, b.value, out);
                    }
                    ui.end_row();
                }
            });
    }
}

/// The command that sets a swept parameter, whether it is the model's or the harvest's.
pub fn set_param(scenario: &Scenario, name: &str, value: f64, out: &mut Vec<Command>) {
    if !value.is_finite() {
        return;
    }
    if let Some(index) = scenario.spec.parameters.iter().position(|p| p.name == name) {
        out.push(Command::SetParam { index, value });
        out.push(Command::EndGesture);
    } else if let Some(h) = crate::harvest_panel::with_param(
        scenario.harvest,
        &scenario.spec.variables,
        name,
        value.max(0.0),
    ) {
        out.push(Command::SetHarvest(h));
        out.push(Command::EndGesture);
    }
}

/// A bifurcation kind in words.
pub fn kind_name(kind: BifurcationKind) -> &'static str {
    match kind {
        BifurcationKind::Fold => "fold",
        BifurcationKind::Transcritical => "transcritical",
        BifurcationKind::Hopf => "Hopf",
    }
}

fn bifurcation_marker(kind: BifurcationKind) -> (MarkerShape, egui::Color32) {
    match kind {
        BifurcationKind::Fold => (MarkerShape::Square, egui::Color32::from_rgb(180, 40, 40)),
        BifurcationKind::Transcritical => {
            (MarkerShape::Diamond, egui::Color32::from_rgb(120, 60, 160))
        }
        BifurcationKind::Hopf => (MarkerShape::Circle, egui::Color32::from_rgb(20, 120, 60)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn runs_split_where_stability_changes_and_stay_joined() {
        // Rosenzweig–MacArthur in K: the coexistence equilibrium loses stability at the Hopf
        // point, so its branch splits into a stable and an unstable run sharing a point.
        let spec = quarry_core::library::builtin("holling-ii")
            .expect("built in")
            .spec();
        let model = Model::new(&spec).expect("compiles");
        // K_H = 3 for the built-in numbers (Rosenzweig 1971; see the UI test).
        let opts = SweepOptions::new("K", 1.0, 8.0, 100);
        let s = sweep(&model, &opts, &|| false, &|_| {}).expect("sweep");
        assert!(
            s.bifurcations
                .iter()
                .any(|b| b.kind == BifurcationKind::Hopf)
        );
        let rs = runs(&s, 0);
        assert!(rs.iter().any(|r| r.stability == Stability::Stable));
        assert!(rs.iter().any(|r| r.stability == Stability::Unstable));
        for w in rs.windows(2) {
            if let (Some(a), Some(b)) = (w[0].points.last(), w[1].points.first())
                && a == b
            {
                return;
            }
        }
        panic!("no two runs share a point");
    }

    #[test]
    fn a_branch_that_leaves_the_window_is_reported_where_it_leaves() {
        // Closed form (Rosenzweig–MacArthur): x* = m/(a(b − mh)) = 0.5 and
        // y* = r(1 − x*/K)(1 + ahx*)/a = 1.171875·r with the built-in numbers, so the
        // coexistence branch crosses the window's top y = 5 at r = 4.2667 and leaves there.
        let spec = quarry_core::library::builtin("holling-ii")
            .expect("built in")
            .spec();
        let model = Model::new(&spec).expect("compiles");
        let s = sweep(
            &model,
            &SweepOptions::new("r", 0.1, 8.0, 80),
            &|| false,
            &|_| {},
        )
        .expect("sweep");
        let exits = window_exits(&s);
        assert_eq!(exits.len(), 1, "{exits:?}");
        let y_top = spec.window.y_max;
        let r_top = y_top / 1.171875;
        // The last point inside, at most one grid step (0.1) before the crossing.
        assert!(
            exits[0] <= r_top && exits[0] > r_top - 0.1 - 1e-9,
            "{exits:?} vs {r_top}"
        );
        // The branches that run from one end of the range to the other do not count.
        let inside = sweep(
            &model,
            &SweepOptions::new("r", 0.1, 4.0, 40),
            &|| false,
            &|_| {},
        )
        .expect("sweep");
        assert!(window_exits(&inside).is_empty());
    }
}
