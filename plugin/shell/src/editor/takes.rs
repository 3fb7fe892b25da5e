//! The takes as a grid of cards (a small piano roll and the measured
//! changes each), and the list of kept takes.

use super::controls::Action;
use super::view_model::{KeptRow, TakeCard, Trend};
use super::{piano_roll, theme};
use egui::{pos2, vec2, Align2, CornerRadius, FontId, Rect, Sense, Stroke, StrokeKind, Ui};

/// Card size in points: four fit across the right-hand column.
pub const CARD_WIDTH: f32 = 150.0;
const ROLL_HEIGHT: f32 = 64.0;
const LINE_HEIGHT: f32 = 15.0;

/// Draws the grid; clicking a card selects it, its button keeps it.
pub fn grid(
    ui: &mut Ui,
    cards: &[TakeCard],
    window: (u8, u8),
    generation: u64,
    actions: &mut Vec<Action>,
) {
    let per_row = ((ui.available_width() + 8.0) / (CARD_WIDTH + 8.0))
        .floor()
        .max(1.0) as usize;
    for row in cards.chunks(per_row) {
        ui.horizontal(|ui| {
            ui.spacing_mut().item_spacing.x = 8.0;
            for card in row {
                card_ui(ui, card, window, generation, actions);
            }
        });
        ui.add_space(4.0);
    }
}

fn card_ui(
    ui: &mut Ui,
    card: &TakeCard,
    window: (u8, u8),
    generation: u64,
    actions: &mut Vec<Action>,
) {
    let lines = card.changes.len() as f32;
    let height = 24.0 + ROLL_HEIGHT + 6.0 + lines * LINE_HEIGHT + 6.0;
    let (rect, response) = ui.allocate_exact_size(vec2(CARD_WIDTH, height), Sense::click());
    let response = response.on_hover_text("Click to select this take and hear it on the track.");
    if response.clicked() {
        actions.push(Action::Select(card.index));
    }

    let painter = ui.painter();
    let edge = if card.selected {
        Stroke::new(2.0, theme::BRASS)
    } else if response.hovered() {
        Stroke::new(1.0, theme::DIM)
    } else {
        Stroke::new(1.0, theme::PANEL_EDGE)
    };
    painter.rect(
        rect,
        CornerRadius::same(6),
        theme::PANEL,
        edge,
        StrokeKind::Inside,
    );

    let inner = rect.shrink(6.0);
    // Selection is told by the outline and, for whoever cannot tell brass
    // from grey, by the play mark before the title.
    let (title, title_colour) = if card.selected {
        (format!("▶ {}", card.title), theme::BRASS)
    } else {
        (card.title.clone(), theme::TEXT)
    };
    painter.text(
        pos2(inner.left(), inner.top() + 8.0),
        Align2::LEFT_CENTER,
        title,
        FontId::proportional(13.0),
        title_colour,
    );

    let roll = Rect::from_min_size(
        pos2(inner.left(), inner.top() + 18.0),
        vec2(inner.width(), ROLL_HEIGHT),
    );
    piano_roll::paint(painter, roll, Some(&card.phrase), window, theme::TIDE);

    let mut y = roll.bottom() + 6.0 + LINE_HEIGHT / 2.0;
    for change in &card.changes {
        let colour = match change.trend {
            Trend::Up => theme::UP,
            Trend::Down => theme::DOWN,
            Trend::Same | Trend::Unknown => theme::DIM,
        };
        painter.text(
            pos2(inner.left(), y),
            Align2::LEFT_CENTER,
            &change.label,
            FontId::proportional(11.0),
            theme::DIM,
        );
        painter.text(
            pos2(inner.right(), y),
            Align2::RIGHT_CENTER,
            &change.text,
            FontId::proportional(11.0),
            colour,
        );
        y += LINE_HEIGHT;
    }

    // The keep control, top right; a kept take shows a brass mark instead.
    let keep_rect = Rect::from_min_size(pos2(inner.right() - 44.0, inner.top()), vec2(44.0, 17.0));
    if card.kept {
        painter.rect_filled(keep_rect, CornerRadius::same(3), theme::BRASS);
        painter.text(
            keep_rect.center(),
            Align2::CENTER_CENTER,
            "KEPT",
            FontId::proportional(10.0),
            theme::RIVER,
        );
    } else {
        let button = egui::Button::new(egui::RichText::new("Keep").size(11.0)).corner_radius(3);
        if ui
            .put(keep_rect, button)
            .on_hover_text("Keep this take in the project (saved with it, exportable as MIDI).")
            .clicked()
        {
            actions.push(Action::Keep {
                generation,
                index: card.index,
            });
        }
    }
}

/// The kept takes, newest last, each with a remove button.
pub fn kept_list(ui: &mut Ui, rows: &[KeptRow], actions: &mut Vec<Action>) {
    if rows.is_empty() {
        ui.label(
            egui::RichText::new("Nothing kept yet: press Keep on a take you like.")
                .color(theme::DIM),
        );
        return;
    }
    for row in rows {
        ui.horizontal(|ui| {
            ui.label(egui::RichText::new("●").color(theme::BRASS));
            ui.label(&row.name);
            ui.label(
                egui::RichText::new(&row.detail)
                    .color(theme::DIM)
                    .size(11.0),
            );
            if ui
                .small_button("Remove")
                .on_hover_text(
                    "Remove it from the project's kept takes (files already exported stay).",
                )
                .clicked()
            {
                actions.push(Action::Forget(row.index));
            }
        });
    }
}
