//! The axis sliders: one row per model axis, with a hold toggle, the
//! slider's value and the measured attribute of the prompt and the selected
//! take beside it.
//!
//! The slider is drawn by hand rather than with egui's: it is centred on 0
//! (a nudge goes either way), shades the ranges where the model is known to
//! decode badly, and reports drags as begin/set/end gestures so the host
//! records one automation gesture per drag.

use super::controls::{Action, Gesture};
use super::theme;
use super::view_model::SliderView;
use egui::{pos2, vec2, CornerRadius, Rect, Sense, Stroke, Ui};

/// Slider track size in points.
const TRACK_WIDTH: f32 = 190.0;
const ROW_HEIGHT: f32 = 26.0;
/// Slider resolution: the parameter's step size.
const STEP: f32 = 0.01;

/// Draws the sliders as a table: axis, hold toggle, slider, value, then the
/// measured attribute of the prompt and of the selected take.
pub fn show(ui: &mut Ui, rows: &[SliderView], take_column: &str, actions: &mut Vec<Action>) {
    if rows.is_empty() {
        ui.label(egui::RichText::new("The loaded model has no control axes.").color(theme::DIM));
        return;
    }
    let heading = |text: &str| egui::RichText::new(text).size(11.0).color(theme::DIM);
    egui::Grid::new("axis-sliders")
        .num_columns(6)
        .spacing([10.0, 2.0])
        .show(ui, |ui| {
            ui.label("");
            ui.label("");
            ui.label(heading("less  ·  nudge  ·  more"));
            ui.label("");
            ui.label(heading("Prompt"));
            ui.label(heading(take_column));
            ui.end_row();
            for row in rows {
                ui.label(egui::RichText::new(&row.label).strong())
                    .on_hover_text(&row.tooltip);
                if ui
                    .selectable_label(row.held, egui::RichText::new("Hold").size(11.0))
                    .on_hover_text(&row.hold_tip)
                    .clicked()
                {
                    actions.push(Action::Hold {
                        slot: row.slot,
                        on: !row.held,
                    });
                }
                slider(ui, row, actions);
                let value = if row.held {
                    egui::RichText::new("held").monospace().color(theme::DIM)
                } else {
                    egui::RichText::new(&row.value_text)
                        .monospace()
                        .color(theme::BRASS)
                };
                ui.label(value);
                ui.label(egui::RichText::new(&row.prompt_text).color(theme::LAMP));
                ui.label(
                    egui::RichText::new(row.take_text.as_deref().unwrap_or("–")).color(theme::TIDE),
                );
                ui.end_row();
            }
        });
}

/// Maps a pointer x to a slider value, snapped to the parameter's step.
pub fn value_at(track: Rect, x: f32) -> f32 {
    let t = ((x - track.left()) / track.width()).clamp(0.0, 1.0);
    let v = t * 2.0 - 1.0;
    (v / STEP).round() * STEP
}

fn x_of(track: Rect, v: f32) -> f32 {
    track.left() + (v.clamp(-1.0, 1.0) + 1.0) / 2.0 * track.width()
}

fn slider(ui: &mut Ui, row: &SliderView, actions: &mut Vec<Action>) {
    let (rect, response) =
        ui.allocate_exact_size(vec2(TRACK_WIDTH, ROW_HEIGHT), Sense::click_and_drag());
    let response = response.on_hover_text(
        "Drag to nudge; double-click to return to 0. Shaded parts: the model often decodes badly there.",
    );
    let track = rect.shrink2(vec2(8.0, 0.0));
    let slot = row.slot;

    // Gestures: a drag is one host gesture; a click or double-click is a
    // complete one on its own.
    let mut value = row.value;
    if response.double_clicked() {
        value = 0.0;
        actions.push(Action::Slider {
            slot,
            gesture: Gesture::Begin,
        });
        actions.push(Action::Slider {
            slot,
            gesture: Gesture::Set(0.0),
        });
        actions.push(Action::Slider {
            slot,
            gesture: Gesture::End,
        });
    } else if response.drag_started() {
        actions.push(Action::Slider {
            slot,
            gesture: Gesture::Begin,
        });
    }
    if response.dragged() || response.drag_started() {
        if let Some(p) = response.interact_pointer_pos() {
            value = value_at(track, p.x);
            actions.push(Action::Slider {
                slot,
                gesture: Gesture::Set(value),
            });
        }
    }
    if response.drag_stopped() {
        actions.push(Action::Slider {
            slot,
            gesture: Gesture::End,
        });
    } else if response.clicked() && !response.double_clicked() {
        if let Some(p) = response.interact_pointer_pos() {
            value = value_at(track, p.x);
            actions.push(Action::Slider {
                slot,
                gesture: Gesture::Begin,
            });
            actions.push(Action::Slider {
                slot,
                gesture: Gesture::Set(value),
            });
            actions.push(Action::Slider {
                slot,
                gesture: Gesture::End,
            });
        }
    }

    let painter = ui.painter();
    let mid_y = rect.center().y;
    let bar = Rect::from_min_max(
        pos2(track.left(), mid_y - 3.0),
        pos2(track.right(), mid_y + 3.0),
    );
    painter.rect_filled(bar, CornerRadius::same(3), theme::TRACK);
    for &(from, to, rate) in &row.unreliable {
        let band = Rect::from_min_max(
            pos2(x_of(track, from), mid_y - 5.0),
            pos2(x_of(track, to), mid_y + 5.0),
        );
        painter.rect_filled(
            band,
            CornerRadius::ZERO,
            theme::HOLE.gamma_multiply(0.35 + 0.65 * rate),
        );
    }
    // Filled from the centre to the value: which way and how far. A held
    // attribute's slider is set aside, so it is drawn faded.
    let accent = if row.held { theme::DIM } else { theme::BRASS };
    let (a, b) = (x_of(track, 0.0), x_of(track, value));
    let fill = Rect::from_min_max(pos2(a.min(b), mid_y - 3.0), pos2(a.max(b), mid_y + 3.0));
    painter.rect_filled(fill, CornerRadius::same(2), accent.gamma_multiply(0.8));
    // Centre and end ticks.
    for (v, h) in [(-1.0, 5.0), (0.0, 8.0), (1.0, 5.0)] {
        let x = x_of(track, v);
        painter.vline(x, (mid_y - h)..=(mid_y + h), Stroke::new(1.0, theme::DIM));
    }
    let knob = pos2(b, mid_y);
    let hot = response.hovered() || response.dragged();
    painter.circle_filled(knob, if hot { 8.0 } else { 7.0 }, accent);
    painter.circle_stroke(knob, 7.0, Stroke::new(1.5, theme::RIVER));
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pointer_positions_map_to_stepped_values_across_the_track() {
        let track = Rect::from_min_size(pos2(10.0, 0.0), vec2(200.0, 20.0));
        assert_eq!(value_at(track, 10.0), -1.0);
        assert_eq!(value_at(track, 110.0), 0.0);
        assert_eq!(value_at(track, 210.0), 1.0);
        assert_eq!(value_at(track, 500.0), 1.0, "past the end clamps");
        assert!((value_at(track, 160.0) - 0.5).abs() < 1e-6);
        // Every value lands on the parameter's 0.01 grid.
        for x in 10..=210 {
            let v = value_at(track, x as f32 + 0.37);
            assert!(((v / STEP).round() * STEP - v).abs() < 1e-6);
            assert!((x_of(track, v) - (x as f32 + 0.37)).abs() <= 1.0 + 1e-3);
        }
    }
}
