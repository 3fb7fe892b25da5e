//! The shaping rows under the sliders: key and scale, aim, blend toward a
//! kept take, hold leeway, and the worker's report on the current set. What
//! they show comes from [`super::shape_view`]; every change is a parameter
//! change, sent as an [`Action`].

use super::controls::{Action, Gesture};
use super::shape_view::ShapeView;
use super::theme;
use crate::shape_params::{aim_text, BlendPath, ScaleChoice, Tonic};
use egui::{RichText, Ui};

pub fn show(ui: &mut Ui, v: &ShapeView, actions: &mut Vec<Action>) {
    let dim = |t: &str| RichText::new(t).color(theme::DIM);
    ui.horizontal(|ui| {
        ui.label(dim("Key"));
        let mut tonic = v.tonic;
        egui::ComboBox::from_id_salt("key")
            .width(52.0)
            .selected_text(v.tonic.name())
            .show_ui(ui, |ui| {
                for t in Tonic::ALL {
                    ui.selectable_value(&mut tonic, t, t.name());
                }
            })
            .response
            .on_hover_text("Keep takes in a key: the decoder may only choose the scale's pitches. Off: any pitch.");
        if tonic != v.tonic {
            actions.push(Action::Key(tonic));
        }
        ui.add_enabled_ui(v.scale_enabled, |ui| {
            let mut scale = v.scale;
            egui::ComboBox::from_id_salt("scale")
                .width(128.0)
                .selected_text(v.scale.name())
                .show_ui(ui, |ui| {
                    for s in ScaleChoice::ALL {
                        ui.selectable_value(&mut scale, s, s.name());
                    }
                });
            if scale != v.scale {
                actions.push(Action::Scale(scale));
            }
        });

        ui.add_space(12.0);
        ui.label(dim("Aim"));
        let mut aim = v.aim;
        egui::ComboBox::from_id_salt("aim")
            .width(128.0)
            .selected_text(v.aim.name())
            .show_ui(ui, |ui| {
                for a in &v.aim_choices {
                    ui.selectable_value(&mut aim, *a, a.name());
                }
            })
            .response
            .on_hover_text("Ask for a value instead of a nudge: the plugin searches that axis until a take measures it.");
        if aim != v.aim {
            actions.push(Action::Aim(aim));
        }
        if let Some(a) = &v.aim_value {
            let attribute = a.attribute;
            let mut value = a.value as f64;
            let response = ui
                .add(
                    egui::DragValue::new(&mut value)
                        .range(a.min as f64..=a.max as f64)
                        .speed(a.step as f64)
                        .custom_formatter(move |n, _| aim_text(attribute, n as f32))
                        .custom_parser(|s| {
                            s.split_whitespace()
                                .next()
                                .and_then(|n| n.trim_start_matches('+').parse().ok())
                        }),
                )
                .on_hover_text("The value to aim at, in the attribute's own unit.");
            if response.changed() {
                let snapped = ((value as f32 / a.step).round() * a.step).clamp(a.min, a.max);
                actions.push(Action::AimValue {
                    attribute,
                    value: snapped,
                });
            }
        }
    });

    ui.horizontal(|ui| {
        ui.label(dim("Blend toward"));
        let mut toward = v.blend_toward;
        egui::ComboBox::from_id_salt("blend-toward")
            .width(150.0)
            .selected_text(&v.blend_label)
            .show_ui(ui, |ui| {
                for (n, label) in &v.blend_choices {
                    ui.selectable_value(&mut toward, *n, label);
                }
            })
            .response
            .on_hover_text("Blend from the prompt toward a kept take: the in-between takes replace the take set while one is chosen.");
        if toward != v.blend_toward {
            actions.push(Action::BlendToward(toward));
        }
        ui.add_enabled_ui(v.blend_enabled, |ui| {
            let mut amount = v.blend_amount;
            let r = ui
                .add(egui::Slider::new(&mut amount, 0.0..=1.0).show_value(false))
                .on_hover_text("How far from the prompt (0%) toward the kept take (100%). Take 1 sits here; the others step back toward the prompt.");
            let snapped = (amount * 100.0).round() / 100.0;
            if r.drag_started() {
                actions.push(Action::BlendAmount(Gesture::Begin));
            }
            if r.changed() {
                if r.dragged() || r.drag_started() {
                    actions.push(Action::BlendAmount(Gesture::Set(snapped)));
                } else {
                    actions.push(Action::BlendAmount(Gesture::Begin));
                    actions.push(Action::BlendAmount(Gesture::Set(snapped)));
                    actions.push(Action::BlendAmount(Gesture::End));
                }
            }
            if r.drag_stopped() {
                actions.push(Action::BlendAmount(Gesture::End));
            }
            ui.label(RichText::new(&v.blend_text).monospace().color(theme::BRASS));
            for (path, text) in [(BlendPath::Linear, "Linear"), (BlendPath::Spherical, "Spherical")] {
                if ui
                    .selectable_label(v.blend_path == path, text)
                    .on_hover_text("Linear: a straight line between the codes. Spherical: along the sphere, keeping the in-between codes as far from the centre as typical ones.")
                    .clicked()
                    && v.blend_path != path
                {
                    actions.push(Action::BlendPath(path));
                }
            }
        });

        ui.add_space(12.0);
        ui.label(dim("Hold leeway"));
        let mut leeway = v.leeway;
        if ui
            .add(
                egui::DragValue::new(&mut leeway)
                    .range(0.25..=4.0)
                    .speed(0.01)
                    .prefix("×")
                    .fixed_decimals(2),
            )
            .on_hover_text("Widens (above ×1) or narrows (below) how far a held attribute may move.")
            .changed()
        {
            actions.push(Action::Leeway((leeway * 100.0).round() / 100.0));
        }
    });

    for n in &v.report {
        let colour = match n.level {
            super::view_model::Level::Warning | super::view_model::Level::Error => theme::WARN,
            super::view_model::Level::Info => theme::INFO,
        };
        ui.add(egui::Label::new(RichText::new(&n.text).size(11.0).color(colour)).wrap());
    }
}
