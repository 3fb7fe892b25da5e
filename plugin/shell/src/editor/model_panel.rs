//! Which model is loaded, its axes, why a load failed, and the chooser: a
//! text field for a model package folder (the folder with manifest.json,
//! encoder.onnx and decoder.onnx).

use super::controls::Action;
use super::theme;
use super::view_model::ModelPanel;
use egui::{RichText, Ui};

/// Draws the panel. `path` is the text field's content, kept by the editor
/// between frames.
pub fn show(ui: &mut Ui, panel: &ModelPanel, path: &mut String, actions: &mut Vec<Action>) {
    ui.horizontal_wrapped(|ui| {
        ui.label(RichText::new(&panel.name).strong());
        if !panel.fingerprint.is_empty() {
            ui.label(
                RichText::new(format!("#{}", panel.fingerprint))
                    .monospace()
                    .size(10.0)
                    .color(theme::DIM),
            )
            .on_hover_text("Fingerprint of the model files: kept takes remember it.");
        }
    });
    if !panel.source.is_empty() {
        ui.label(RichText::new(&panel.source).size(11.0).color(theme::DIM));
    }
    if !panel.summary.is_empty() {
        ui.add(egui::Label::new(RichText::new(&panel.summary).size(11.0)).wrap())
            .on_hover_text(&panel.description);
    }
    if !panel.axes.is_empty() {
        ui.label(RichText::new(&panel.axes_line).size(11.0).color(theme::DIM))
            .on_hover_text(panel.axes.join("\n"));
    }
    if let Some(error) = &panel.error {
        egui::Frame::new()
            .fill(theme::ERROR.gamma_multiply(0.18))
            .stroke(egui::Stroke::new(1.0, theme::ERROR))
            .corner_radius(4)
            .inner_margin(6)
            .show(ui, |ui| {
                ui.add(egui::Label::new(RichText::new(error).color(theme::TEXT).size(11.0)).wrap());
            });
    }
    ui.add_space(4.0);
    let field = egui::TextEdit::singleline(path)
        .hint_text("/path/to/model package folder")
        .desired_width(f32::INFINITY);
    let response = ui.add(field);
    let entered = response.lost_focus() && ui.input(|i| i.key_pressed(egui::Key::Enter));
    ui.horizontal(|ui| {
        if ui
            .button("Load folder")
            .on_hover_text("Load the model package in this folder. If it cannot be used, the current model stays and the reason is shown here.")
            .clicked()
            || entered
        {
            actions.push(Action::LoadModel(path.clone()));
        }
        if ui.button("Built-in model").clicked() {
            actions.push(Action::UseBuiltinModel);
        }
    });
}
