//! The editor window: prompt, nudge sliders, takes, kept takes and model,
//! drawn with egui (nice-plug-egui) on its own window thread.
//!
//! How it talks to the rest of the plugin:
//! - it *reads* the worker's published view ([`crate::status::Shared`],
//!   an `Arc` swapped under a lock the audio thread never takes), the
//!   audio thread's atomics, the parameters (atomics) and the session's
//!   kept takes (the session lock, also never taken by the audio thread);
//! - it *changes* things only through parameters (the host's `ParamSetter`)
//!   and the worker's bounded command channel ([`controls`]).
//! So it can never block the audio thread, and closing and reopening the
//! window loses nothing: all state lives in the plugin, not here.
//!
//! Files: [`view_model`] decides what is shown (tested without a window);
//! [`piano_roll`], [`sliders`], [`takes`], [`model_panel`] draw it;
//! [`controls`] and [`press`] carry the composer's actions back; [`theme`]
//! holds the colours.

pub mod controls;
pub mod model_panel;
pub mod piano_roll;
pub mod press;
pub mod shape_view;
pub mod shaping;
pub mod sliders;
pub mod takes;
pub mod theme;
pub mod view_model;
pub mod window_threads;

use crate::link::Command;
use crate::params::{Listen, NudgebarParams, MAX_TAKES};
use crate::state::KeptTake;
use crate::status::Shared;
use controls::Action;
use crossbeam_channel::Sender;
use egui::{RichText, Ui};
use nice_plug::context::gui::GuiContext;
use nice_plug::editor::dpi::LogicalSize;
use nice_plug::prelude::{BoolParam, ParamSetter};
use nice_plug_egui::{
    EguiEditor, EguiEditorState, EguiNiceSettings, Frame, NiceEguiApp, RepaintNotifier,
};
use press::{Press, Step};
use std::sync::atomic::Ordering;
use std::sync::Arc;
use std::time::{Duration, Instant};
use view_model::{Inputs, Level, Screen};
use window_threads::WindowThreads;

/// The editor type the plugin declares.
pub type NudgebarEditor = EguiEditor<EditorApp>;

/// Width of the left column (prompt, capture, model).
const LEFT_WIDTH: f32 = 300.0;
/// How long one of the editor's own notices stays up.
const TRANSIENT_FOR: Duration = Duration::from_secs(8);

/// Makes the editor (called once, when the host creates the plugin).
pub fn create(
    params: Arc<NudgebarParams>,
    shared: Arc<Shared>,
    commands: Sender<Command>,
    window_threads: Arc<WindowThreads>,
) -> Option<NudgebarEditor> {
    let state = EguiEditorState::from_size(
        LogicalSize::new(theme::WINDOW_WIDTH as f64, theme::WINDOW_HEIGHT as f64),
        1.0,
    );
    let settings = EguiNiceSettings::new().with_tile("Nudgebar");
    nice_plug_egui::create_egui_editor(
        state,
        RepaintNotifier::new(),
        settings,
        EditorApp::new(params, shared, commands, window_threads),
    )
}

/// The editor's state between frames. Lives as long as the plugin, across
/// openings of the window.
pub struct EditorApp {
    /// Parameters and session: read every frame, written through the host.
    params: Arc<NudgebarParams>,
    /// Worker view and audio-thread facts.
    shared: Arc<Shared>,
    /// The worker's command channel (bounded; only `try_send`).
    commands: Sender<Command>,
    /// Window threads the plugin must outlive (see [`window_threads`]).
    window_threads: Arc<WindowThreads>,
    /// The host's side of parameter changes; set when a window opens.
    gui: Option<GuiContext>,
    /// Kept takes, copied from the session when it changes (by its edit
    /// count), not every frame.
    kept: Vec<KeptTake>,
    kept_edits: Option<u64>,
    /// The model folder text field.
    model_path: String,
    /// Presses of the edge-triggered parameters under way.
    arm: Press,
    grab: Press,
    /// A notice of the editor's own and when it was posted.
    transient: Option<(String, Instant)>,
    /// Audio-thread counters last seen, to notice when they grow.
    seen_grabs_empty: u32,
    seen_keeps_refused: u32,
}

impl EditorApp {
    pub fn new(
        params: Arc<NudgebarParams>,
        shared: Arc<Shared>,
        commands: Sender<Command>,
        window_threads: Arc<WindowThreads>,
    ) -> Self {
        let seen_grabs_empty = shared.audio.grabs_empty.load(Ordering::Relaxed);
        let seen_keeps_refused = shared.audio.keeps_refused.load(Ordering::Relaxed);
        Self {
            params,
            shared,
            commands,
            window_threads,
            gui: None,
            kept: Vec::new(),
            kept_edits: None,
            model_path: String::new(),
            arm: Press::default(),
            grab: Press::default(),
            transient: None,
            seen_grabs_empty,
            seen_keeps_refused,
        }
    }

    fn notify(&mut self, text: String) {
        self.transient = Some((text, Instant::now()));
    }

    /// Re-reads the kept takes when the session changed.
    fn refresh_kept(&mut self) {
        let edits = self.params.session.edits();
        if self.kept_edits != Some(edits) {
            self.kept = self.params.session.read(|s| s.kept.clone());
            self.kept_edits = Some(edits);
        }
    }

    /// Turns growing audio-thread counters into notices.
    fn watch_counters(&mut self) {
        let audio = self.shared.clone();
        let audio = &audio.audio;
        let empty = audio.grabs_empty.load(Ordering::Relaxed);
        if empty > self.seen_grabs_empty {
            self.seen_grabs_empty = empty;
            self.notify("Nothing was played in the last bars, so there was nothing to use. Play a phrase, then press Use last bars.".into());
        }
        let refused = audio.keeps_refused.load(Ordering::Relaxed);
        if refused > self.seen_keeps_refused {
            self.seen_keeps_refused = refused;
            self.notify("A keep request could not be queued; press Keep again.".into());
        }
    }

    fn apply(&mut self, action: Action, after_error: bool) {
        let Some(gui) = self.gui.clone() else {
            return;
        };
        let setter = gui.param_setter();
        let action = match action {
            Action::NewTakes { .. } => Action::NewTakes { after_error },
            Action::Arm => {
                let step = self.arm.press(self.params.arm.value());
                run_step(&setter, &self.params.arm, step);
                return;
            }
            Action::Grab => {
                let step = self.grab.press(self.params.grab.value());
                run_step(&setter, &self.params.grab, step);
                return;
            }
            other => other,
        };
        if let Some(message) = controls::apply(&action, &self.params, &setter, &self.commands) {
            self.notify(message);
        }
    }

    fn tick_presses(&mut self) {
        let Some(gui) = self.gui.clone() else {
            return;
        };
        let setter = gui.param_setter();
        let blocks = self.shared.audio.blocks.load(Ordering::Acquire);
        let step = self.arm.tick(self.params.arm.value(), blocks);
        run_step(&setter, &self.params.arm, step);
        let step = self.grab.tick(self.params.grab.value(), blocks);
        run_step(&setter, &self.params.grab, step);
    }
}

fn run_step(setter: &ParamSetter, param: &BoolParam, step: Step) {
    match step {
        Step::Nothing => {}
        Step::SetOn => controls::set_once(setter, param, true),
        Step::SetOff => controls::set_once(setter, param, false),
    }
}

impl NiceEguiApp for EditorApp {
    fn build(
        &mut self,
        egui_ctx: egui::Context,
        gui: GuiContext,
        _frame: &mut Frame,
    ) -> Result<(), nice_plug_egui::baseview::HandlerError> {
        // Runs on the window's own thread as its window is built.
        self.window_threads.enter();
        theme::apply(&egui_ctx);
        self.gui = Some(gui);
        if self.model_path.is_empty() {
            self.model_path = self
                .params
                .session
                .read(|s| s.model_path.clone())
                .unwrap_or_default();
        }
        Ok(())
    }

    fn ui(&mut self, ui: &mut Ui, _frame: &mut Frame) {
        self.refresh_kept();
        self.watch_counters();
        if self
            .transient
            .as_ref()
            .is_some_and(|(_, at)| at.elapsed() > TRANSIENT_FOR)
        {
            self.transient = None;
        }
        let worker = self.shared.view();
        let audio = &self.shared.audio;
        let busy = self.shared.busy.load(Ordering::Acquire);
        let capture = audio.capture();
        let inputs = Inputs {
            worker: &worker,
            busy,
            capture,
            sliders: self.params.axis_sliders().map(|p| p.value()),
            selected: self.params.selected_index(),
            listen: self.params.listen.value(),
            prompt_bars: self.params.prompt_bars.value().clamp(1, 4) as u8,
            kept: &self.kept,
            events_refused: audio.events_refused.load(Ordering::Relaxed),
            transient: self.transient.as_ref().map(|(t, _)| t.as_str()),
            shape: shape_view::read(&self.params),
        };
        let screen = view_model::screen(&inputs);

        let mut actions = Vec::new();
        let pressing = (self.arm.pending(), self.grab.pending());
        let mut path = std::mem::take(&mut self.model_path);
        layout(
            ui,
            &screen,
            &self.params,
            worker.generation,
            pressing,
            &mut path,
            &mut actions,
        );
        self.model_path = path;

        let after_error = worker.request_error.is_some();
        for action in actions {
            self.apply(action, after_error);
        }
        self.tick_presses();

        // The worker and the audio thread change what is shown without any
        // input event: look again soon, sooner while something is moving.
        let lively = busy || screen.header.capturing || self.arm.pending() || self.grab.pending();
        ui.ctx()
            .request_repaint_after(Duration::from_millis(if lively { 50 } else { 200 }));
    }
}

// ----- layout -----

fn layout(
    ui: &mut Ui,
    screen: &Screen,
    params: &NudgebarParams,
    generation: u64,
    pressing: (bool, bool),
    path: &mut String,
    actions: &mut Vec<Action>,
) {
    egui::Frame::new().fill(theme::RIVER).inner_margin(10).show(ui, |ui| {
        ui.set_min_size(ui.available_size());
        header(ui, screen);
        ui.add_space(8.0);
        ui.horizontal_top(|ui| {
            ui.vertical(|ui| {
                ui.set_width(LEFT_WIDTH);
                card(ui, "PROMPT", |ui| prompt(ui, screen));
                card(ui, "CAPTURE & LISTEN", |ui| capture(ui, params, pressing, actions));
                card(ui, "MODEL", |ui| model_panel::show(ui, &screen.model, path, actions));
            });
            ui.add_space(4.0);
            ui.vertical(|ui| {
                card(ui, "NUDGES", |ui| {
                    sliders::show(ui, &screen.sliders, &screen.take_column, actions);
                    ui.add_space(4.0);
                    take_settings(ui, params, actions);
                    ui.add_space(2.0);
                    shaping::show(ui, &screen.shape, actions);
                });
                card(ui, "TAKES", |ui| match &screen.takes_hint {
                    Some(hint) => {
                        ui.label(RichText::new(hint).color(theme::DIM));
                    }
                    None => {
                        egui::ScrollArea::vertical()
                            .id_salt("takes")
                            .max_height(290.0)
                            .show(ui, |ui| takes::grid(ui, &screen.takes, screen.pitch_window, generation, actions));
                    }
                });
                card(ui, "KEPT", |ui| {
                    ui.horizontal(|ui| {
                        if ui
                            .add_enabled(!screen.kept.is_empty(), egui::Button::new("Export MIDI files"))
                            .on_hover_text("Write every kept take as a Standard MIDI File into Nudgebar's export folder.")
                            .clicked()
                        {
                            actions.push(Action::Export);
                        }
                    });
                    egui::ScrollArea::vertical()
                        .id_salt("kept")
                        .max_height(64.0)
                        .show(ui, |ui| takes::kept_list(ui, &screen.kept, actions));
                });
                notices(ui, screen);
            });
        });
    });
}

/// A titled panel.
fn card(ui: &mut Ui, title: &str, add: impl FnOnce(&mut Ui)) {
    egui::Frame::new()
        .fill(theme::PANEL)
        .stroke(egui::Stroke::new(1.0, theme::PANEL_EDGE))
        .corner_radius(6)
        .inner_margin(8)
        .show(ui, |ui| {
            ui.set_width(ui.available_width());
            ui.label(RichText::new(title).size(11.0).strong().color(theme::DIM));
            ui.add_space(2.0);
            add(ui);
        });
    ui.add_space(6.0);
}

fn header(ui: &mut Ui, screen: &Screen) {
    let h = &screen.header;
    ui.horizontal(|ui| {
        ui.label(RichText::new("Nudgebar").size(20.0).strong().color(theme::BRASS));
        ui.add_space(6.0);
        ui.label(RichText::new(&h.model_name).color(theme::TEXT));
        ui.add_space(12.0);
        if let Some(busy) = &h.busy {
            ui.add(egui::Spinner::new().size(14.0).color(theme::TIDE));
            ui.label(RichText::new(busy).color(theme::TIDE));
        }
        ui.with_layout(egui::Layout::right_to_left(egui::Align::Center), |ui| {
            let colour = if h.capturing { theme::BRASS } else { theme::DIM };
            ui.label(RichText::new(&h.capture).color(colour));
            if let Some(redraws) = &h.redraws {
                ui.label(RichText::new(redraws).size(11.0).color(theme::DIM));
            }
            if let Some(holes) = &h.holes {
                ui.label(RichText::new(holes).color(theme::WARN))
                    .on_hover_text("The decoder produced output the plugin had to repair; takes are still playable.");
            }
        });
    });
}

fn prompt(ui: &mut Ui, screen: &Screen) {
    let p = &screen.prompt;
    ui.label(RichText::new(&p.summary).color(theme::TEXT));
    piano_roll::show(
        ui,
        egui::vec2(ui.available_width(), 96.0),
        p.phrase.as_ref(),
        screen.pitch_window,
        theme::LAMP,
    );
    if !p.readings.is_empty() {
        egui::Grid::new("prompt-readings")
            .num_columns(2)
            .spacing([12.0, 2.0])
            .show(ui, |ui| {
                for r in &p.readings {
                    ui.label(RichText::new(&r.label).size(11.0).color(theme::DIM));
                    ui.label(RichText::new(&r.value).size(11.0).color(theme::LAMP));
                    ui.end_row();
                }
            });
    }
    for a in &p.adjustments {
        ui.add(egui::Label::new(RichText::new(a).size(10.0).color(theme::DIM)).wrap());
    }
}

fn capture(
    ui: &mut Ui,
    params: &NudgebarParams,
    pressing: (bool, bool),
    actions: &mut Vec<Action>,
) {
    ui.horizontal(|ui| {
        ui.label(RichText::new("Bars").color(theme::DIM));
        let bars = params.prompt_bars.value();
        for n in 1..=4 {
            if ui.selectable_label(bars == n, n.to_string()).clicked() && bars != n {
                actions.push(Action::PromptBars(n));
            }
        }
    });
    ui.horizontal(|ui| {
        let arm = if pressing.0 { "Arming…" } else { "Arm capture" };
        if ui
            .button(RichText::new(arm).color(theme::BRASS))
            .on_hover_text("Record the next bars from the next bar line (with the transport stopped: from your first note).")
            .clicked()
        {
            actions.push(Action::Arm);
        }
        if ui
            .button(if pressing.1 { "Taking…" } else { "Use last bars" })
            .on_hover_text("Use what you just played: the most recent complete bars with notes.")
            .clicked()
        {
            actions.push(Action::Grab);
        }
    });
    ui.horizontal(|ui| {
        ui.label(RichText::new("Listen").color(theme::DIM));
        let now = params.listen.value();
        for (mode, text) in [
            (Listen::Input, "Input"),
            (Listen::Take, "Take"),
            (Listen::Both, "Take + input"),
        ] {
            if ui.selectable_label(now == mode, text).clicked() && now != mode {
                actions.push(Action::Listen(mode));
            }
        }
    });
}

fn take_settings(ui: &mut Ui, params: &NudgebarParams, actions: &mut Vec<Action>) {
    ui.horizontal(|ui| {
        ui.label(RichText::new("Takes").color(theme::DIM));
        let mut takes = params.takes.value();
        if ui
            .add(egui::DragValue::new(&mut takes).range(1..=MAX_TAKES as i32))
            .on_hover_text("How many takes each request makes.")
            .changed()
        {
            actions.push(Action::Takes(takes));
        }
        ui.label(RichText::new("Spread").color(theme::DIM));
        let mut spread = params.spread.value();
        if ui
            .add(
                egui::DragValue::new(&mut spread)
                    .range(0.0..=2.0)
                    .speed(0.01)
                    .suffix(" σ"),
            )
            .on_hover_text("How far the takes wander on what no slider controls.")
            .changed()
        {
            actions.push(Action::Spread(spread));
        }
        ui.label(RichText::new("Seed").color(theme::DIM));
        let mut seed = params.seed.value();
        if ui
            .add(egui::DragValue::new(&mut seed).range(0..=99_999))
            .on_hover_text("Same prompt, model, sliders and seed give the same takes.")
            .changed()
        {
            actions.push(Action::Seed(seed));
        }
        if ui
            .button(RichText::new("New takes").color(theme::BRASS))
            .on_hover_text("Make a fresh set with the next seed.")
            .clicked()
        {
            actions.push(Action::NewTakes { after_error: false });
        }
    });
}

fn notices(ui: &mut Ui, screen: &Screen) {
    for n in &screen.notices {
        let colour = match n.level {
            Level::Error => theme::ERROR,
            Level::Warning => theme::WARN,
            Level::Info => theme::INFO,
        };
        ui.horizontal_wrapped(|ui| {
            ui.label(RichText::new("●").color(colour));
            ui.add(egui::Label::new(RichText::new(&n.text).color(colour)).wrap());
        });
    }
}
