//! Harvest settings: a rule per species (none, proportional effort, constant quota, or a
//! threshold control rule), price and cost, and the catch at the stable equilibria of the
//! harvested system, with the caution beside it.

use egui::{DragValue, RichText, Ui};
use quarry_core::harvest::{CAUTION, Harvest, HarvestRule};
use quarry_core::linear::Class;
use quarry_core::scene::Scene;

use crate::command::Command;
use crate::scenario::Scenario;
use crate::style::{self, num};

/// The harvest panel.
#[derive(Debug, Default)]
pub struct HarvestPanel;

/// The rule kinds, as the selector lists them.
const KINDS: [&str; 4] = ["none", "effort", "quota", "threshold rule"];

fn kind(rule: &HarvestRule) -> usize {
    match rule {
        HarvestRule::None => 0,
        HarvestRule::Proportional { .. } => 1,
        HarvestRule::Quota { .. } => 2,
        HarvestRule::Threshold { .. } => 3,
    }
}

/// A rule of `kind` with starting numbers scaled to the species' window extent.
fn fresh_rule(kind: usize, extent: f64) -> HarvestRule {
    match kind {
        1 => HarvestRule::Proportional {
            effort: 0.2,
            catchability: 1.0,
        },
        2 => HarvestRule::Quota {
            quota: 0.05 * extent,
            taper: None,
        },
        3 => HarvestRule::Threshold {
            lower: 0.1 * extent,
            upper: 0.4 * extent,
            target_rate: 0.2,
        },
        _ => HarvestRule::None,
    }
}

/// A labelled number; returns the new value when the user changed it to a valid one.
fn number(ui: &mut Ui, label: &str, name: &str, value: f64, speed: f64) -> Option<f64> {
    let l = ui.label(label);
    let mut v = value;
    let r = ui
        .add(
            DragValue::new(&mut v)
                .speed(speed)
                .range(0.0..=f64::MAX)
                .max_decimals(6),
        )
        .labelled_by(l.id);
    style::accessible_name(ui, &r, name);
    (r.changed() && v.is_finite() && v >= 0.0 && v != value).then_some(v)
}

impl HarvestPanel {
    /// Draws the settings and the catch at the stable equilibria.
    pub fn ui(
        &mut self,
        ui: &mut Ui,
        scenario: &Scenario,
        scene: Option<&Scene>,
        error: Option<&str>,
        out: &mut Vec<Command>,
    ) {
        let h = scenario.harvest;
        let w = scenario.spec.window;
        let mut next = h;
        for i in 0..2 {
            let var = &scenario.spec.variables[i];
            let extent = if i == 0 { w.x_max } else { w.y_max }.abs().max(1e-9);
            ui.horizontal(|ui| {
                let l = ui.label(RichText::new(var).strong());
                let current = kind(&h.rules[i]);
                let combo = egui::ComboBox::from_id_salt(("harvest-rule", i))
                    .selected_text(KINDS[current])
                    .width(120.0)
                    .show_ui(ui, |ui| {
                        for (k, text) in KINDS.iter().enumerate() {
                            if ui.selectable_label(k == current, *text).clicked() && k != current {
                                next.rules[i] = fresh_rule(k, extent);
                            }
                        }
                    });
                combo.response.labelled_by(l.id);
            });
            ui.horizontal_wrapped(|ui| {
                ui.add_space(12.0);
                match h.rules[i] {
                    HarvestRule::None => {
                        ui.weak("no harvest rule").on_hover_text(
                            "Catch terms written into the model's own rates still apply",
                        );
                    }
                    HarvestRule::Proportional {
                        effort,
                        catchability,
                    } => {
                        if let Some(v) =
                            number(ui, "effort E", &format!("{var} effort"), effort, 0.01)
                        {
                            next.rules[i] = HarvestRule::Proportional {
                                effort: v,
                                catchability,
                            };
                        }
                        if let Some(v) = number(
                            ui,
                            "catchability q",
                            &format!("{var} catchability"),
                            catchability,
                            0.01,
                        ) {
                            next.rules[i] = HarvestRule::Proportional {
                                effort,
                                catchability: v,
                            };
                        }
                        ui.weak(format!("catch q·E·{var}"));
                    }
                    HarvestRule::Quota { quota, taper } => {
                        if let Some(v) = number(
                            ui,
                            "quota H",
                            &format!("{var} quota"),
                            quota,
                            extent / 500.0,
                        ) {
                            next.rules[i] = HarvestRule::Quota { quota: v, taper };
                        }
                        ui.weak(format!("catch H, falling to 0 as {var} → 0"));
                    }
                    HarvestRule::Threshold {
                        lower,
                        upper,
                        target_rate,
                    } => {
                        let speed = extent / 500.0;
                        let mut r = (lower, upper, target_rate);
                        if let Some(v) = number(
                            ui,
                            "no fishing below",
                            &format!("{var} lower level"),
                            lower,
                            speed,
                        ) {
                            r.0 = v;
                        }
                        if let Some(v) = number(
                            ui,
                            "full rate above",
                            &format!("{var} upper level"),
                            upper,
                            speed,
                        ) {
                            r.1 = v;
                        }
                        if let Some(v) = number(
                            ui,
                            "rate F",
                            &format!("{var} target rate"),
                            target_rate,
                            0.01,
                        ) {
                            r.2 = v;
                        }
                        if r != (lower, upper, target_rate) && r.1 > r.0 {
                            next.rules[i] = HarvestRule::Threshold {
                                lower: r.0,
                                upper: r.1,
                                target_rate: r.2,
                            };
                        }
                    }
                }
            });
            if h.rules[i] != HarvestRule::None {
                ui.horizontal(|ui| {
                    ui.add_space(12.0);
                    let e = h.economics[i];
                    if let Some(v) = number(ui, "price", &format!("{var} price"), e.price, 0.01) {
                        next.economics[i].price = v;
                    }
                    if let Some(v) = number(
                        ui,
                        "cost per effort",
                        &format!("{var} cost per effort"),
                        e.cost_per_effort,
                        0.01,
                    ) {
                        next.economics[i].cost_per_effort = v;
                    }
                });
            }
        }
        if next != h {
            out.push(Command::SetHarvest(next));
        }
        if let Some(e) = error {
            ui.colored_label(style::ERROR, e);
        }
        if !h.is_active() {
            return;
        }
        ui.add_space(4.0);
        equilibrium_catch_ui(ui, scenario, &h, scene);
        ui.add(egui::Label::new(RichText::new(CAUTION).small().weak()).wrap());
    }
}

/// The catch and profit at each stable equilibrium of the harvested system.
fn equilibrium_catch_ui(ui: &mut Ui, scenario: &Scenario, h: &Harvest, scene: Option<&Scene>) {
    let Some(scene) = scene else { return };
    let [xn, yn] = &scenario.spec.variables;
    let stable: Vec<_> = scene
        .equilibria
        .iter()
        .filter(|e| {
            matches!(
                e.class(),
                Class::StableNode
                    | Class::StableSpiral
                    | Class::StableDegenerateNode
                    | Class::StableStar
            )
        })
        .collect();
    if stable.is_empty() {
        ui.weak("No stable equilibrium in the window: the catch is not sustained at one level.");
        return;
    }
    ui.label(RichText::new("Sustained catch at the stable equilibria").strong());
    for e in stable {
        let c = h.catch_at(&scenario.spec.window, [e.x, e.y]);
        let mut text = format!("at ({}, {}): ", num(e.x), num(e.y));
        let mut parts = Vec::new();
        for (i, name) in [xn, yn].into_iter().enumerate() {
            if h.rules[i] != HarvestRule::None {
                parts.push(format!("{name} catch {}", num(c[i])));
            }
        }
        text.push_str(&parts.join(", "));
        if h.economics
            .iter()
            .any(|e| e.price > 0.0 || e.cost_per_effort > 0.0)
        {
            text.push_str(&format!(", profit {} per unit time", num(h.profit(c))));
        }
        ui.label(text);
    }
}

/// The harvest with one of its numbers changed, by the parameter name the harvested model
/// gives it (`E_x`, `q_x`, `H_x`, `Blim_x`, `Btrig_x`, `F_x` for species `x`). `None` when the
/// name is not one of the harvest's.
pub fn with_param(h: Harvest, variables: &[String; 2], name: &str, value: f64) -> Option<Harvest> {
    let (base, var) = name.split_once('_')?;
    let i = variables.iter().position(|v| v == var)?;
    let mut out = h;
    let rule = &mut out.rules[i];
    match (base, rule) {
        ("E", HarvestRule::Proportional { effort, .. }) => *effort = value,
        ("q", HarvestRule::Proportional { catchability, .. }) => *catchability = value,
        ("H", HarvestRule::Quota { quota, .. }) => *quota = value,
        ("s", HarvestRule::Quota { taper, .. }) => *taper = Some(value),
        ("Blim", HarvestRule::Threshold { lower, .. }) => *lower = value,
        ("Btrig", HarvestRule::Threshold { upper, .. }) => *upper = value,
        ("F", HarvestRule::Threshold { target_rate, .. }) => *target_rate = value,
        _ => return None,
    }
    Some(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn harvest_numbers_are_found_by_the_names_the_harvested_model_gives_them() {
        let vars = ["cod".to_owned(), "seal".to_owned()];
        let mut h = Harvest::default();
        h.rules[0] = fresh_rule(1, 10.0);
        h.rules[1] = fresh_rule(2, 10.0);
        let spec = quarry_core::model::ModelSpec {
            variables: vars.clone(),
            ..quarry_core::library::default_model()
        };
        let spec = quarry_core::model::ModelSpec {
            rates: ["cod".into(), "seal".into()],
            ..spec
        };
        // Every parameter the harvest adds can be set back through its name.
        for p in h
            .apply(&spec)
            .expect("applies")
            .parameters
            .iter()
            .skip(spec.parameters.len())
        {
            let changed = with_param(h, &vars, &p.name, p.value + 1.0).expect(&p.name);
            let again = changed.apply(&spec).expect("applies");
            let q = again
                .parameters
                .iter()
                .find(|q| q.name == p.name)
                .expect("kept");
            assert_eq!(q.value, p.value + 1.0, "{}", p.name);
        }
        assert!(
            with_param(h, &vars, "E_seal", 1.0).is_none(),
            "seal has a quota"
        );
        assert!(with_param(h, &vars, "alpha", 1.0).is_none());
    }
}
