//! The equilibria table: where each equilibrium is, its Jacobian, trace, determinant,
//! eigenvalues, class, the nonlinear verdict for linear centres, and one sentence in words.

use egui::{Label, RichText, Ui};
use quarry_core::analysis::Equilibrium;
use quarry_core::linear::Complex;
use quarry_core::scene::Scene;
use quarry_core::verdict::Verdict;

use crate::style::{self, num};

/// Narrowest the "in words" column gets, in points; narrower, the sentences go under the
/// table instead.
const MIN_SENTENCE_WIDTH: f32 = 300.0;
/// Roughly how wide the table's number columns are, in points.
const NUMBERS_WIDTH: f32 = 700.0;

/// The equilibria table.
#[derive(Debug, Default)]
pub struct EquilibriaPanel;

/// The eigenvalues as people write them.
pub fn eigenvalues_text(ev: &[Complex; 2]) -> String {
    let [a, b] = ev;
    if a.im != 0.0 || b.im != 0.0 {
        format!("{} ± {}i", num(a.re), num(a.im.abs()))
    } else {
        format!("{}, {}", num(a.re), num(b.re))
    }
}

/// The nonlinear verdict on a linear centre, in words; `None` where the linear class decides.
pub fn verdict_text(e: &Equilibrium) -> Option<&'static str> {
    e.nonlinear.as_ref().map(|v| match v.verdict {
        Verdict::Center => "true centre",
        Verdict::StableFocus => "weak stable focus",
        Verdict::UnstableFocus => "weak unstable focus",
        Verdict::Undetermined => "undetermined",
    })
}

impl EquilibriaPanel {
    /// Draws the table for the scene shown.
    pub fn ui(&mut self, ui: &mut Ui, scene: Option<&Scene>, variables: &[String; 2]) {
        // The sentences wrap to the panel's width; when the panel is narrower than the
        // table's minimum it scrolls. The scroll area fills the panel whatever it holds, so
        // the panel keeps its size.
        let right = ui.max_rect().right();
        egui::ScrollArea::both()
            .auto_shrink([false, false])
            .show(ui, |ui| self.table_ui(ui, scene, variables, right));
    }

    fn table_ui(
        &mut self,
        ui: &mut Ui,
        scene: Option<&Scene>,
        variables: &[String; 2],
        right: f32,
    ) {
        let Some(scene) = scene else {
            ui.weak("Computing…");
            return;
        };
        if scene.equilibria.is_empty() {
            ui.weak("No equilibrium in the window.");
            return;
        }
        let [x, y] = variables;
        let in_rows = right - ui.cursor().left() >= NUMBERS_WIDTH + MIN_SENTENCE_WIDTH;
        egui::Grid::new("equilibria")
            .striped(true)
            .num_columns(8)
            .spacing([14.0, 4.0])
            .show(ui, |ui| {
                for h in [
                    String::new(),
                    format!("({x}, {y})"),
                    "Jacobian".into(),
                    "trace".into(),
                    "det".into(),
                    "eigenvalues".into(),
                    "class".into(),
                    if in_rows {
                        "in words".into()
                    } else {
                        String::new()
                    },
                ] {
                    ui.label(RichText::new(h).strong());
                }
                ui.end_row();
                for e in &scene.equilibria {
                    row_ui(ui, e);
                    if in_rows {
                        sentence_ui(ui, e, right);
                    }
                    ui.end_row();
                }
            });
        if !in_rows {
            ui.add_space(6.0);
            for e in &scene.equilibria {
                ui.horizontal(|ui| {
                    style::marker_swatch(ui, &style::marker(e));
                    ui.label(RichText::new(format!("({}, {})", num(e.x), num(e.y))).monospace());
                    sentence_ui(ui, e, right);
                });
            }
        }
    }
}

fn row_ui(ui: &mut Ui, e: &Equilibrium) {
    let lin = &e.linear.for_display();
    let [[a, b], [c, d]] = lin.jacobian;
    style::marker_swatch(ui, &style::marker(e));
    ui.label(RichText::new(format!("({}, {})", num(e.x), num(e.y))).monospace());
    let width = [a, b, c, d]
        .iter()
        .map(|v| num(*v).chars().count())
        .max()
        .unwrap_or(1);
    let jac = format!(
        "{:>w$}  {:>w$}\n{:>w$}  {:>w$}",
        num(a),
        num(b),
        num(c),
        num(d),
        w = width
    );
    ui.label(RichText::new(jac).monospace());
    ui.label(RichText::new(num(lin.trace)).monospace());
    ui.label(RichText::new(num(lin.det)).monospace());
    ui.label(RichText::new(eigenvalues_text(&lin.eigenvalues)).monospace());
    ui.vertical(|ui| {
        ui.add(Label::new(lin.class.describe()).extend());
        if let Some(v) = verdict_text(e) {
            ui.add(Label::new(RichText::new(format!("nonlinear: {v}")).strong()).extend());
        }
    });
}

/// The plain sentence, wrapped to the room left before `right`.
fn sentence_ui(ui: &mut Ui, e: &Equilibrium, right: f32) {
    let width = (right - ui.cursor().left() - 16.0).max(MIN_SENTENCE_WIDTH);
    ui.allocate_ui_with_layout(
        egui::Vec2::new(width, 0.0),
        egui::Layout::top_down(egui::Align::Min),
        |ui| {
            ui.set_width(width);
            ui.add(Label::new(e.sentence()).wrap());
        },
    );
}
