//! The model editor: both rates as formulas, the variables' names, the parameter list, a first
//! integral, the window, and the built-in library to start from.
//!
//! Every edit is checked at once. A model that compiles replaces the one drawn; one that does
//! not shows its error beside the text at fault (with the column) while the plane keeps
//! drawing the last model that worked.

use egui::{Button, DragValue, RichText, TextEdit, Ui};
use quarry_core::library::BUILTINS;
use quarry_core::model::{Field, Model, ModelError, ModelSpec, Parameter};

use crate::command::Command;
use crate::style;

/// Where an error belongs in the editor.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Place {
    Variables,
    Rate(usize),
    Parameters,
    Invariant,
    Window,
}

fn place_of(error: &ModelError, draft: &ModelSpec) -> Place {
    match error {
        ModelError::Formula {
            field: Field::Rate(i, _),
            ..
        } => Place::Rate((*i).min(1)),
        ModelError::Formula {
            field: Field::Invariant,
            ..
        } => Place::Invariant,
        ModelError::BadName { name, .. } if draft.variables.contains(name) => Place::Variables,
        ModelError::BadName { .. }
        | ModelError::NonFiniteParameter { .. }
        | ModelError::UnknownParameter { .. } => Place::Parameters,
        ModelError::BadWindow(_) => Place::Window,
    }
}

/// The model editor.
#[derive(Debug)]
pub struct ModelEditor {
    /// What the user is typing.
    draft: ModelSpec,
    /// The scenario's model the draft last followed.
    synced: ModelSpec,
    /// Why the draft does not compile, if it does not.
    error: Option<ModelError>,
    /// The built-in picked in the library list.
    library_choice: usize,
}

impl ModelEditor {
    /// An editor showing `spec`.
    pub fn new(spec: &ModelSpec) -> Self {
        Self {
            draft: spec.clone(),
            synced: spec.clone(),
            error: None,
            library_choice: 0,
        }
    }

    /// Why the text in the editor does not compile, if it does not.
    pub fn error(&self) -> Option<&ModelError> {
        self.error.as_ref()
    }

    /// Drops the draft and shows `spec` (after undo, redo or loading a built-in).
    pub fn reset_to(&mut self, spec: &ModelSpec) {
        *self = Self {
            library_choice: self.library_choice,
            ..Self::new(spec)
        };
    }

    /// Follows changes made elsewhere (sliders, undo) unless the user is midway through a
    /// broken edit, whose text is kept.
    fn follow(&mut self, current: &ModelSpec) {
        if *current == self.synced {
            return;
        }
        if self.error.is_none() {
            self.draft = current.clone();
        } else {
            for p in &mut self.draft.parameters {
                if let Some(q) = current.parameters.iter().find(|q| q.name == p.name) {
                    p.value = q.value;
                }
            }
        }
        self.synced = current.clone();
    }

    /// Draws the editor; a draft that compiles is sent as [`Command::EditModel`].
    pub fn ui(&mut self, ui: &mut Ui, current: &ModelSpec, out: &mut Vec<Command>) {
        self.follow(current);
        let before = self.draft.clone();

        ui.heading("Model");
        self.library_ui(ui, out);
        ui.separator();

        let place = self.error.as_ref().map(|e| place_of(e, &self.draft));
        egui::Grid::new("model-names")
            .num_columns(2)
            .spacing([8.0, 6.0])
            .show(ui, |ui| {
                let l = ui.label("Name");
                ui.add(TextEdit::singleline(&mut self.draft.name).desired_width(180.0))
                    .labelled_by(l.id);
                ui.end_row();
                let l = ui.label("Variables");
                ui.horizontal(|ui| {
                    ui.add(
                        TextEdit::singleline(&mut self.draft.variables[0])
                            .desired_width(60.0)
                            .font(egui::TextStyle::Monospace),
                    )
                    .labelled_by(l.id)
                    .on_hover_text("Horizontal axis");
                    ui.label("across,");
                    let r = ui
                        .add(
                            TextEdit::singleline(&mut self.draft.variables[1])
                                .desired_width(60.0)
                                .font(egui::TextStyle::Monospace),
                        )
                        .on_hover_text("Vertical axis");
                    style::accessible_name(ui, &r, "vertical variable");
                    ui.label("up");
                });
                ui.end_row();
            });
        if place == Some(Place::Variables) {
            self.error_ui(ui, None);
        }

        ui.add_space(4.0);
        for i in 0..2 {
            let var = self.draft.variables[i].clone();
            let l = ui.label(RichText::new(format!("d{var}/dt =")).monospace());
            ui.add(
                TextEdit::singleline(&mut self.draft.rates[i])
                    .id_salt(("rate", i))
                    .desired_width(f32::INFINITY)
                    .font(egui::TextStyle::Monospace),
            )
            .labelled_by(l.id);
            if place == Some(Place::Rate(i)) {
                let text = self.draft.rates[i].clone();
                self.error_ui(ui, Some(&text));
            }
        }

        ui.add_space(4.0);
        self.parameters_ui(ui);
        if place == Some(Place::Parameters) {
            self.error_ui(ui, None);
        }

        ui.add_space(4.0);
        let l = ui.label("First integral H (optional, conserved along orbits)");
        let mut h = self.draft.invariant.clone().unwrap_or_default();
        let r = ui
            .add(
                TextEdit::singleline(&mut h)
                    .id_salt("invariant")
                    .desired_width(f32::INFINITY)
                    .hint_text("none")
                    .font(egui::TextStyle::Monospace),
            )
            .labelled_by(l.id);
        if r.changed() {
            self.draft.invariant = (!h.trim().is_empty()).then_some(h.clone());
        }
        if place == Some(Place::Invariant) {
            self.error_ui(ui, Some(&h));
        }

        ui.add_space(4.0);
        self.window_ui(ui);
        if place == Some(Place::Window) {
            self.error_ui(ui, None);
        }

        ui.add_space(6.0);
        if self.error.is_some() {
            ui.colored_label(
                style::ERROR,
                "Not applied: the plane keeps showing the last model that worked.",
            );
        } else {
            ui.weak("Edits apply as you type.");
        }

        if self.draft != before {
            self.check(current, out);
        }
    }

    /// Compiles the draft; sends it when it works, keeps the error when it does not.
    fn check(&mut self, current: &ModelSpec, out: &mut Vec<Command>) {
        match Model::new(&self.draft) {
            Ok(_) => {
                self.error = None;
                if self.draft != *current {
                    out.push(Command::EditModel(self.draft.clone()));
                }
            }
            Err(e) => self.error = Some(e),
        }
    }

    fn library_ui(&mut self, ui: &mut Ui, out: &mut Vec<Command>) {
        let choice = BUILTINS.get(self.library_choice).or(BUILTINS.first());
        ui.horizontal(|ui| {
            ui.label("Start from");
            let combo = egui::ComboBox::from_id_salt("editor-library")
                .selected_text(choice.map(|b| b.key).unwrap_or("—"))
                .show_ui(ui, |ui| {
                    for (i, b) in BUILTINS.iter().enumerate() {
                        ui.selectable_value(&mut self.library_choice, i, b.key)
                            .on_hover_text(b.summary);
                    }
                });
            style::accessible_name(ui, &combo.response, "built-in to start from");
            if ui
                .button("Load")
                .on_hover_text("Replace the model with this built-in (undo brings it back)")
                .clicked()
            {
                out.push(Command::LoadBuiltin(self.library_choice));
            }
        });
        if let Some(b) = choice {
            ui.add(egui::Label::new(RichText::new(b.summary).small().weak()).wrap());
        }
    }

    fn parameters_ui(&mut self, ui: &mut Ui) {
        ui.label("Parameters");
        let mut remove = None;
        egui::Grid::new("model-params")
            .num_columns(3)
            .spacing([6.0, 4.0])
            .show(ui, |ui| {
                for (i, p) in self.draft.parameters.iter_mut().enumerate() {
                    let r = ui
                        .add_sized(
                            [90.0, 20.0],
                            TextEdit::singleline(&mut p.name)
                                .id_salt(("param-name", i))
                                .font(egui::TextStyle::Monospace),
                        )
                        .on_hover_text("Rename (the formulas must use the new name)");
                    style::accessible_name(ui, &r, format!("name of parameter {}", i + 1));
                    let r = ui.add(DragValue::new(&mut p.value).speed(0.01).max_decimals(6));
                    style::accessible_name(ui, &r, format!("value of parameter {}", i + 1));
                    let r = ui
                        .small_button("🗙")
                        .on_hover_text(format!("Remove parameter {}", p.name));
                    style::accessible_name(ui, &r, format!("remove parameter {}", i + 1));
                    if r.clicked() {
                        remove = Some(i);
                    }
                    ui.end_row();
                }
            });
        if let Some(i) = remove
            && i < self.draft.parameters.len()
        {
            self.draft.parameters.remove(i);
        }
        if ui.add(Button::new("Add parameter").small()).clicked() {
            let name = (1..)
                .map(|k| format!("p{k}"))
                .find(|n| self.draft.parameters.iter().all(|p| &p.name != n))
                .unwrap_or_else(|| "p".into());
            self.draft.parameters.push(Parameter::new(&name, 1.0));
        }
    }

    fn window_ui(&mut self, ui: &mut Ui) {
        let [x, y] = self.draft.variables.clone();
        let w = &mut self.draft.window;
        ui.label("Window");
        egui::Grid::new("model-window")
            .num_columns(2)
            .spacing([6.0, 4.0])
            .show(ui, |ui| {
                ui.label(RichText::new(&x).monospace());
                ui.horizontal(|ui| {
                    let s = (w.width().abs() / 200.0).max(1e-6);
                    let r = ui.add(DragValue::new(&mut w.x_min).speed(s).prefix("from "));
                    style::accessible_name(ui, &r, format!("{x} from"));
                    let r = ui.add(DragValue::new(&mut w.x_max).speed(s).prefix("to "));
                    style::accessible_name(ui, &r, format!("{x} to"));
                });
                ui.end_row();
                ui.label(RichText::new(&y).monospace());
                ui.horizontal(|ui| {
                    let s = (w.height().abs() / 200.0).max(1e-6);
                    let r = ui.add(DragValue::new(&mut w.y_min).speed(s).prefix("from "));
                    style::accessible_name(ui, &r, format!("{y} from"));
                    let r = ui.add(DragValue::new(&mut w.y_max).speed(s).prefix("to "));
                    style::accessible_name(ui, &r, format!("{y} to"));
                });
                ui.end_row();
            });
    }

    /// The error in red, with a caret under its column when it is in a formula.
    fn error_ui(&self, ui: &mut Ui, formula: Option<&str>) {
        let Some(error) = &self.error else {
            return;
        };
        let message = match error {
            ModelError::Formula {
                column, message, ..
            } => format!("column {column}: {message}"),
            other => other.to_string(),
        };
        if let (Some(text), ModelError::Formula { column, .. }) = (formula, error) {
            let caret = format!("{}^", " ".repeat(column.saturating_sub(1)));
            ui.label(
                RichText::new(format!("{text}\n{caret}"))
                    .monospace()
                    .color(style::ERROR),
            );
        }
        ui.add(egui::Label::new(RichText::new(message).color(style::ERROR)).wrap());
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_bad_formula_is_kept_with_its_error_and_not_sent() {
        let spec = quarry_core::library::default_model();
        let mut editor = ModelEditor::new(&spec);
        editor.draft.rates[0] = "a*x - alpha*x*y)".into();
        let mut out = Vec::new();
        editor.check(&spec, &mut out);
        assert!(out.is_empty());
        let place = editor.error().map(|e| place_of(e, &editor.draft));
        assert_eq!(place, Some(Place::Rate(0)));
    }

    #[test]
    fn a_good_edit_is_sent_as_a_command() {
        let spec = quarry_core::library::default_model();
        let mut editor = ModelEditor::new(&spec);
        editor.draft.rates[0] = "a*x - alpha*x*y - 0.1*x".into();
        let mut out = Vec::new();
        editor.check(&spec, &mut out);
        assert!(matches!(out.as_slice(), [Command::EditModel(_)]));
        assert!(editor.error().is_none());
    }
}
