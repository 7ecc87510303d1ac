//! The sustained-yield view: the equilibrium catch of one species against effort or quota,
//! with the maximum sustainable yield, the collapse point, and (with a price and a cost) the
//! open-access equilibrium and the maximum economic yield. The curve is computed on its own
//! thread with progress and Cancel; clicking it sets that effort or quota in the harvest.

use egui::{Button, DragValue, RichText, Ui};
use egui_plot::{Corner, Legend, Line, LineStyle, MarkerShape, Plot, Points, VLine};
use quarry_core::harvest::{CAUTION, Economics, HarvestRule};
use quarry_core::sustained::{YieldCurve, YieldError, YieldOptions, YieldRule, sustained_yield};

use crate::command::Command;
use crate::job::Job;
use crate::scenario::Scenario;
use crate::style::{self, num};

/// What a curve was computed for.
#[derive(Clone, Debug)]
struct Done {
    curve: YieldCurve,
    millis: f64,
}

/// The view's settings, the running job and the last curve.
#[derive(Debug)]
pub struct YieldView {
    /// The harvested species (0 or 1).
    pub species: usize,
    /// Over effort (true) or quota (false).
    pub over_effort: bool,
    /// Range of effort or quota.
    pub from: f64,
    /// End of the range.
    pub to: f64,
    /// Values, both ends included.
    pub steps: usize,
    /// Catchability for the effort rule.
    pub catchability: f64,
    /// Widen the range until the stock's collapse is in it.
    pub extend: bool,
    job: Option<Job<Result<YieldCurve, YieldError>>>,
    done: Option<Done>,
    error: Option<String>,
}

impl Default for YieldView {
    fn default() -> Self {
        Self {
            species: 0,
            over_effort: true,
            from: 0.0,
            to: 1.0,
            steps: 200,
            catchability: 1.0,
            extend: true,
            job: None,
            done: None,
            error: None,
        }
    }
}

/// How many times [`extended_curve`] may widen the range fourfold.
const MAX_WIDENINGS: usize = 7;

/// The curve over `opts`' range, widened fourfold at a time (at most [`MAX_WIDENINGS`] times)
/// while the stock does not collapse within it; once it does after widening, computed again
/// over `from..1.5 × collapse` so the curve fills the plot at full resolution.
fn extended_curve(
    spec: &quarry_core::model::ModelSpec,
    harvest: &quarry_core::harvest::Harvest,
    mut opts: YieldOptions,
    cancelled: &dyn Fn() -> bool,
    progress: &dyn Fn(f32),
) -> Result<YieldCurve, YieldError> {
    let passes = (MAX_WIDENINGS + 2) as f32;
    let mut pass = 0.0_f32;
    let run = |opts: &YieldOptions, pass: f32| {
        sustained_yield(spec, harvest, opts, cancelled, &|f| {
            progress(((pass + f) / passes).min(1.0));
        })
    };
    let mut curve = run(&opts, pass)?;
    let mut widened = false;
    while curve.collapse.is_none() && (pass as usize) < MAX_WIDENINGS {
        let width = opts.to - opts.from;
        opts.to = opts.from + 4.0 * width;
        pass += 1.0;
        widened = true;
        curve = run(&opts, pass)?;
    }
    let collapse_at = curve.collapse.as_ref().map(|c| c.value);
    if widened && let Some(at) = collapse_at {
        let to = opts.from + 1.5 * (at - opts.from);
        if to > opts.from && to != opts.to {
            opts.to = to;
            curve = run(&opts, pass + 1.0)?;
        }
    }
    progress(1.0);
    Ok(curve)
}

impl YieldView {
    /// The last curve.
    pub fn result(&self) -> Option<&YieldCurve> {
        self.done.as_ref().map(|d| &d.curve)
    }

    fn rule(&self, scenario: &Scenario) -> YieldRule {
        if self.over_effort {
            YieldRule::Effort {
                catchability: self.catchability,
            }
        } else {
            let taper = match scenario.harvest.rules[self.species] {
                HarvestRule::Quota { taper, .. } => taper,
                _ => None,
            };
            YieldRule::Quota { taper }
        }
    }

    /// Starts the curve for the current settings (in place when `ctx` is `None`).
    pub fn start(&mut self, scenario: &Scenario, ctx: Option<egui::Context>) {
        let economics: Economics = scenario.harvest.economics[self.species];
        let mut opts = YieldOptions::new(
            self.species,
            self.rule(scenario),
            self.from,
            self.to,
            self.steps,
        );
        if economics.price > 0.0 || economics.cost_per_effort > 0.0 {
            opts.economics = Some(economics);
        }
        let spec = scenario.spec.clone();
        let harvest = scenario.harvest;
        let extend = self.extend;
        self.error = None;
        self.job = Some(Job::start(ctx, move |cancelled, progress| {
            if extend {
                extended_curve(&spec, &harvest, opts, cancelled, progress)
            } else {
                sustained_yield(&spec, &harvest, &opts, cancelled, progress)
            }
        }));
    }

    fn poll(&mut self) {
        let Some(job) = &mut self.job else { return };
        let millis = job.elapsed().as_secs_f64() * 1000.0;
        let Some(result) = job.take() else { return };
        self.job = None;
        match result {
            Ok(curve) => {
                // The range the curve was computed over, when it was widened.
                if let Some(last) = curve.points.last() {
                    self.to = last.value;
                }
                self.done = Some(Done { curve, millis });
            }
            Err(YieldError::Sweep(quarry_core::sweep::SweepError::Cancelled)) => {
                self.error = Some("Cancelled.".into());
            }
            Err(e) => self.error = Some(format!("The curve could not be computed: {e}")),
        }
    }

    /// Draws the settings, the progress, the curve and what is read off it.
    pub fn ui(
        &mut self,
        ui: &mut Ui,
        scenario: &Scenario,
        ctx: Option<egui::Context>,
        out: &mut Vec<Command>,
    ) {
        self.poll();
        let vars = &scenario.spec.variables;
        ui.horizontal_wrapped(|ui| {
            let l = ui.label("Species");
            egui::ComboBox::from_id_salt("yield-species")
                .selected_text(vars[self.species].as_str())
                .show_ui(ui, |ui| {
                    ui.selectable_value(&mut self.species, 0, vars[0].as_str());
                    ui.selectable_value(&mut self.species, 1, vars[1].as_str());
                })
                .response
                .labelled_by(l.id);
            ui.radio_value(&mut self.over_effort, true, "over effort");
            ui.radio_value(&mut self.over_effort, false, "over quota");
            let l = ui.label("from");
            let r = ui
                .add(
                    DragValue::new(&mut self.from)
                        .speed(0.01)
                        .range(0.0..=f64::MAX),
                )
                .labelled_by(l.id);
            style::accessible_name(ui, &r, "yield from");
            let l = ui.label("to");
            let r = ui
                .add(
                    DragValue::new(&mut self.to)
                        .speed(0.01)
                        .range(0.0..=f64::MAX),
                )
                .labelled_by(l.id);
            style::accessible_name(ui, &r, "yield to");
            let l = ui.label("values");
            let r = ui
                .add(DragValue::new(&mut self.steps).range(2..=20_000))
                .labelled_by(l.id);
            style::accessible_name(ui, &r, "yield values");
            if self.over_effort {
                let l = ui.label("catchability");
                let r = ui
                    .add(
                        DragValue::new(&mut self.catchability)
                            .speed(0.01)
                            .range(0.0..=f64::MAX),
                    )
                    .labelled_by(l.id);
                style::accessible_name(ui, &r, "yield catchability");
            }
            ui.checkbox(&mut self.extend, "widen to collapse")
                .on_hover_text(
                    "When the stock does not collapse within the range, widen it (up to \
                     4⁷ times) until it does, then frame the curve to 1.5 × the collapse point",
                );
            let running = self.job.as_ref().is_some_and(Job::is_running);
            let valid = self.from.is_finite() && self.to.is_finite() && self.to > self.from;
            if ui
                .add_enabled(!running && valid, Button::new("Compute curve"))
                .clicked()
            {
                self.start(scenario, ctx.clone());
                self.poll();
            }
        });
        ui.weak(
            "Price and cost come from the harvest panel. The other species keeps its harvest \
             rule.",
        );
        if let Some(job) = &self.job {
            job.progress_ui(ui, |_| {});
        }
        if let Some(e) = &self.error {
            ui.colored_label(style::ERROR, e);
        }
        let Some(done) = &self.done else {
            ui.weak("Choose the species and a range of effort or quota, then compute the curve.");
            ui.add(egui::Label::new(RichText::new(CAUTION).small().weak()).wrap());
            return;
        };
        let curve = &done.curve;
        let what = curve.rule.as_str();
        let plot = Plot::new("yield-curve")
            .custom_x_axes(style::x_axis(format!("{what} on {}", curve.species)))
            .y_axis_label(format!("sustained catch of {}", curve.species))
            .height((ui.available_height() - 140.0).max(180.0))
            .show_crosshair(false)
            .label_formatter(|_| None)
            .legend(Legend::default().position(Corner::RightTop));
        let response = plot.show(ui, |pui| {
            let mut piece: Option<(usize, Vec<[f64; 2]>)> = None;
            let mut lines = Vec::new();
            for p in &curve.points {
                let Some(c) = p.catch.filter(|_| p.stable()) else {
                    lines.extend(piece.take());
                    continue;
                };
                match &mut piece {
                    Some((k, pts)) if *k == p.piece => pts.push([p.value, c]),
                    _ => {
                        lines.extend(piece.take());
                        piece = Some((p.piece, vec![[p.value, c]]));
                    }
                }
            }
            lines.extend(piece);
            for (_, pts) in lines {
                pui.line(
                    Line::new("equilibrium catch", pts)
                        .color(egui::Color32::from_rgb(21, 94, 117))
                        .width(2.4)
                        .allow_hover(false),
                );
            }
            if curve.economics.is_some() {
                let profit: Vec<[f64; 2]> = curve
                    .points
                    .iter()
                    .filter(|p| p.stable())
                    .filter_map(|p| p.profit.map(|v| [p.value, v]))
                    .collect();
                pui.line(
                    Line::new("profit", profit)
                        .color(egui::Color32::from_rgb(160, 110, 20))
                        .width(1.6)
                        .style(LineStyle::Dashed { length: 6.0 })
                        .allow_hover(false),
                );
            }
            let marks = [
                (
                    "maximum sustainable yield",
                    curve.msy.map(|o| [o.value, o.catch]),
                    MarkerShape::Circle,
                    egui::Color32::from_rgb(20, 120, 60),
                ),
                (
                    "collapse",
                    curve.collapse.map(|c| [c.value, c.catch]),
                    MarkerShape::Cross,
                    egui::Color32::from_rgb(190, 30, 30),
                ),
                (
                    "open access (zero profit)",
                    curve.open_access.map(|o| [o.value, o.catch]),
                    MarkerShape::Square,
                    egui::Color32::from_rgb(90, 90, 90),
                ),
                (
                    "maximum economic yield",
                    curve.mey.map(|o| [o.value, o.catch]),
                    MarkerShape::Diamond,
                    egui::Color32::from_rgb(160, 110, 20),
                ),
            ];
            for (name, at, shape, colour) in marks {
                if let Some(at) = at {
                    pui.points(
                        Points::new(name, vec![at])
                            .shape(shape)
                            .color(colour)
                            .filled(true)
                            .radius(6.0),
                    );
                }
            }
            let now = match (scenario.harvest.rules[curve.species_index], curve.rule) {
                (HarvestRule::Proportional { effort, .. }, YieldRule::Effort { .. }) => {
                    Some(effort)
                }
                (HarvestRule::Quota { quota, .. }, YieldRule::Quota { .. }) => Some(quota),
                _ => None,
            };
            if let Some(v) = now {
                pui.vline(
                    VLine::new(format!("{what} now"), v)
                        .color(style::CURRENT_VALUE)
                        .style(LineStyle::Dashed { length: 6.0 })
                        .width(1.5),
                );
            }
            pui.pointer_coordinate().map(|p| p.x)
        });
        let r = response
            .response
            .on_hover_text_at_pointer(format!("Click: set this {what} in the harvest panel"));
        if r.clicked()
            && let Some(v) = response.inner.filter(|v| v.is_finite() && *v >= 0.0)
        {
            let mut h = scenario.harvest;
            h.rules[curve.species_index] = curve.rule.harvest_rule(v);
            out.push(Command::SetHarvest(h));
            out.push(Command::EndGesture);
        }
        summary_ui(ui, curve, done.millis);
        ui.add(egui::Label::new(RichText::new(CAUTION).small().weak()).wrap());
    }
}

/// What is read off the curve, in lines.
pub fn summary_lines(curve: &YieldCurve) -> Vec<String> {
    let what = curve.rule.as_str();
    let mut lines = Vec::new();
    if let Some(m) = curve.msy {
        let edge = if m.at_collapse {
            " — at the collapse point itself: the edge of a cliff, not a target"
        } else {
            ""
        };
        lines.push(format!(
            "Maximum sustainable yield {} at {what} {}{edge}",
            num(m.catch),
            num(m.value)
        ));
    }
    if let Some(c) = curve.collapse {
        lines.push(format!(
            "The stock collapses at {what} {} ({})",
            num(c.value),
            crate::sweep_view::kind_name(c.kind)
        ));
    }
    if let Some(o) = curve.open_access {
        lines.push(format!(
            "Open access (profit 0) at {what} {}, catch {}",
            num(o.value),
            num(o.catch)
        ));
    }
    if let Some(o) = curve.mey {
        lines.push(format!(
            "Maximum economic yield at {what} {}, catch {}, profit {}",
            num(o.value),
            num(o.catch),
            o.profit.map(num).unwrap_or_default()
        ));
    }
    if curve.points.iter().any(|p| !p.stable()) {
        lines.push(format!(
            "Where the curve is missing there is no stable equilibrium (cycles or none) at that {what}."
        ));
    }
    lines
}

fn summary_ui(ui: &mut Ui, curve: &YieldCurve, millis: f64) {
    for line in summary_lines(curve) {
        ui.label(line);
    }
    ui.weak(format!("{} values in {millis:.0} ms", curve.points.len()));
}
