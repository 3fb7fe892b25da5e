//! A small piano roll: a phrase over its bars, time left to right, pitch
//! bottom to top, bar lines strong and beat lines faint.

use super::theme;
use egui::{pos2, Color32, CornerRadius, Painter, Rect, Stroke};
use nudgebar_music::Phrase;

/// Paints `phrase` into `rect` over the pitch rows `window` (lowest,
/// highest; see `view_model::pitch_window`). `None` paints an empty roll.
pub fn paint(
    painter: &Painter,
    rect: Rect,
    phrase: Option<&Phrase>,
    window: (u8, u8),
    notes: Color32,
) {
    painter.rect_filled(rect, CornerRadius::same(3), theme::ROLL);
    let Some(phrase) = phrase else {
        return;
    };
    let (lo, hi) = window;
    let rows = (hi - lo + 1) as f32;
    let row_h = rect.height() / rows;
    let y_of = |pitch: u8| rect.bottom() - (pitch - lo + 1) as f32 * row_h;

    // Black-key rows a shade lighter, so octaves read at a glance.
    for p in lo..=hi {
        if matches!(p % 12, 1 | 3 | 6 | 8 | 10) {
            let y = y_of(p);
            painter.rect_filled(
                Rect::from_min_max(pos2(rect.left(), y), pos2(rect.right(), y + row_h)),
                CornerRadius::ZERO,
                theme::ROLL_BLACK_KEY,
            );
        }
    }

    let len = phrase.len_beats().max(1e-6);
    let x_of = |beat: f64| rect.left() + (beat / len) as f32 * rect.width();
    let measure = phrase.measure_len();
    let ts = phrase.time_signature;
    // Felt beats (beat groups of the metre), in quarter notes.
    let notated = 4.0 / ts.denominator as f64;
    for m in 0..phrase.measures {
        let start = m as f64 * measure;
        let mut at = start;
        for group in ts.beat_groups() {
            at += group as f64 * notated;
            if at < start + measure - 1e-9 {
                let x = x_of(at);
                painter.vline(x, rect.y_range(), Stroke::new(1.0, theme::BEAT_LINE));
            }
        }
        if m > 0 {
            painter.vline(
                x_of(start),
                rect.y_range(),
                Stroke::new(1.5, theme::BAR_LINE),
            );
        }
    }

    for n in &phrase.notes {
        if n.pitch < lo || n.pitch > hi {
            continue;
        }
        let x0 = x_of(n.onset.max(0.0));
        let x1 = x_of(n.end().min(len));
        // A hair of gap between repeated notes, and never thinner than 2 px.
        let x1 = (x1 - 1.0).max(x0 + 2.0);
        let y = y_of(n.pitch);
        let h = row_h.max(2.0);
        painter.rect_filled(
            Rect::from_min_max(pos2(x0, y), pos2(x1, y + h)),
            CornerRadius::same(if h > 5.0 { 2 } else { 0 }),
            notes,
        );
    }
}

/// Allocates a roll of `size` in the layout and paints it.
pub fn show(
    ui: &mut egui::Ui,
    size: egui::Vec2,
    phrase: Option<&Phrase>,
    window: (u8, u8),
    notes: Color32,
) -> egui::Response {
    let (rect, response) = ui.allocate_exact_size(size, egui::Sense::hover());
    paint(ui.painter(), rect, phrase, window, notes);
    response
}
