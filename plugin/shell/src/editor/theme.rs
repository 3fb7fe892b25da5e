//! The editor's colours and sizes, in one place.
//!
//! The palette comes from the project's invented port town: river water at
//! night for the background, the ferry crews' brass horn for what is
//! selected or kept, lamp light for the prompt's notes and tide green for
//! the takes'. Public so the screenshot test can look for these exact
//! colours in the rendered window.

use egui::Color32;

/// Window background: river water at night.
pub const RIVER: Color32 = Color32::from_rgb(0x16, 0x1e, 0x27);
/// Card and panel fill.
pub const PANEL: Color32 = Color32::from_rgb(0x1f, 0x2a, 0x35);
/// Card outline.
pub const PANEL_EDGE: Color32 = Color32::from_rgb(0x31, 0x40, 0x4e);
/// Piano-roll background.
pub const ROLL: Color32 = Color32::from_rgb(0x12, 0x19, 0x20);
/// Text fields: a shade apart from the rolls, so the screenshot test can
/// tell a roll from a text field by colour.
pub const FIELD: Color32 = Color32::from_rgb(0x10, 0x16, 0x1c);
/// Piano-roll rows of black keys, a shade lighter so the octave reads.
pub const ROLL_BLACK_KEY: Color32 = Color32::from_rgb(0x17, 0x20, 0x29);
/// Bar lines in a piano roll.
pub const BAR_LINE: Color32 = Color32::from_rgb(0x4a, 0x5b, 0x6b);
/// Beat lines in a piano roll.
pub const BEAT_LINE: Color32 = Color32::from_rgb(0x26, 0x32, 0x3e);

/// Body text.
pub const TEXT: Color32 = Color32::from_rgb(0xdc, 0xe4, 0xea);
/// Secondary text: units, hints, labels.
pub const DIM: Color32 = Color32::from_rgb(0x8b, 0x9b, 0xa9);

/// Brass: the selected take, kept marks, primary buttons.
pub const BRASS: Color32 = Color32::from_rgb(0xd8, 0xa9, 0x4c);
/// The prompt's notes: lamp light.
pub const LAMP: Color32 = Color32::from_rgb(0xf2, 0xc8, 0x7d);
/// A take's notes: tide green.
pub const TIDE: Color32 = Color32::from_rgb(0x4f, 0xb8, 0xa6);

/// An attribute that went up / down against the prompt.
pub const UP: Color32 = Color32::from_rgb(0x7c, 0xc9, 0x8f);
pub const DOWN: Color32 = Color32::from_rgb(0xe3, 0x86, 0x6a);

/// Notices.
pub const ERROR: Color32 = Color32::from_rgb(0xe8, 0x5d, 0x5d);
pub const WARN: Color32 = Color32::from_rgb(0xe6, 0xa6, 0x3c);
pub const INFO: Color32 = Color32::from_rgb(0x8f, 0xb8, 0xd8);

/// Slider track, and the shading where the model decodes badly.
pub const TRACK: Color32 = Color32::from_rgb(0x2b, 0x38, 0x45);
pub const HOLE: Color32 = Color32::from_rgb(0x8a, 0x3b, 0x3b);

/// The editor's size in logical pixels: room for the prompt, six sliders,
/// the shaping rows with a few report lines, and a row of four takes
/// without scrolling.
pub const WINDOW_WIDTH: u32 = 1000;
pub const WINDOW_HEIGHT: u32 = 720;

/// Sets egui's own widgets (buttons, text fields, combo boxes) to the
/// palette, and lets proportional text fall back on the monospace font
/// egui ships, which has the arrows and bullets the light font lacks.
pub fn apply(ctx: &egui::Context) {
    let mut fonts = egui::FontDefinitions::default();
    if let Some(family) = fonts.families.get_mut(&egui::FontFamily::Proportional) {
        family.push("Hack".to_owned());
    }
    ctx.set_fonts(fonts);

    let mut visuals = egui::Visuals::dark();
    visuals.panel_fill = RIVER;
    visuals.window_fill = PANEL;
    visuals.extreme_bg_color = FIELD;
    visuals.override_text_color = Some(TEXT);
    visuals.selection.bg_fill = BRASS.gamma_multiply(0.6);
    visuals.selection.stroke.color = BRASS;
    visuals.widgets.inactive.weak_bg_fill = Color32::from_rgb(0x2a, 0x37, 0x44);
    visuals.widgets.inactive.bg_fill = Color32::from_rgb(0x2a, 0x37, 0x44);
    visuals.widgets.hovered.weak_bg_fill = Color32::from_rgb(0x36, 0x46, 0x55);
    visuals.widgets.hovered.bg_fill = Color32::from_rgb(0x36, 0x46, 0x55);
    visuals.widgets.active.weak_bg_fill = BRASS.gamma_multiply(0.7);
    visuals.widgets.active.bg_fill = BRASS.gamma_multiply(0.7);
    ctx.set_visuals(visuals);
}
