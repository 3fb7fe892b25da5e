//! What the composer can do in the editor, and how each action reaches the
//! plugin: parameters go through the host (nice-plug's `ParamSetter`, so
//! automation records them and the audio thread reads them as atomics);
//! everything else goes on the worker's bounded command channel with
//! `try_send`, the same channel the audio thread uses. Nothing here waits.

use crate::link::Command;
use crate::params::{Listen, NudgebarParams};
use crate::shape_params::{AimAt, BlendPath, ScaleChoice, Tonic};
use crossbeam_channel::{Sender, TrySendError};
use nice_plug::prelude::{Param, ParamSetter};
use nudgebar_music::attributes::Attribute;
use std::path::PathBuf;

/// A slider drag, as the host wants to hear it: begin, values, end.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Gesture {
    Begin,
    Set(f32),
    End,
}

/// One thing the composer did.
#[derive(Debug, Clone, PartialEq)]
pub enum Action {
    /// Moved axis slider `slot` (0–5).
    Slider {
        slot: usize,
        gesture: Gesture,
    },
    /// Clicked take `index` (0-based): select it and hear it.
    Select(usize),
    /// Keep take `index` of the set with this generation.
    Keep {
        generation: u64,
        index: usize,
    },
    /// Remove kept take `index`.
    Forget(usize),
    /// New takes: the next seed (a parameter, so the host can recall it).
    NewTakes {
        after_error: bool,
    },
    Export,
    /// Arm a capture from the next bar line.
    Arm,
    /// Use what was just played.
    Grab,
    LoadModel(String),
    UseBuiltinModel,
    Listen(Listen),
    PromptBars(i32),
    Takes(i32),
    Spread(f32),
    Seed(i32),
    /// Shaping beyond the sliders (`shape_params.rs`).
    Key(Tonic),
    Scale(ScaleChoice),
    /// Hold (or release) the attribute of axis slot `slot` (0–5).
    Hold {
        slot: usize,
        on: bool,
    },
    Leeway(f32),
    Aim(AimAt),
    /// The aim lane of `attribute`, in its unit.
    AimValue {
        attribute: Attribute,
        value: f32,
    },
    /// Kept take number (1-based) to blend toward; 0 = off.
    BlendToward(i32),
    /// The blend amount, dragged like a slider.
    BlendAmount(Gesture),
    BlendPath(BlendPath),
}

/// Sets a parameter as one complete gesture.
pub fn set_once<P: Param>(setter: &ParamSetter, param: &P, value: P::Plain) {
    setter.begin_set_parameter(param);
    setter.set_parameter(param, value);
    setter.end_set_parameter(param);
}

/// Applies the actions that are plain parameter changes or commands.
/// Returns a sentence for the composer when an action could not be done.
/// (Arm and Grab are presses over several frames: see `press.rs`.)
pub fn apply(
    action: &Action,
    params: &NudgebarParams,
    setter: &ParamSetter,
    commands: &Sender<Command>,
) -> Option<String> {
    match action {
        Action::Slider { slot, gesture } => {
            let param = params.axis_sliders()[(*slot).min(5)];
            match *gesture {
                Gesture::Begin => setter.begin_set_parameter(param),
                Gesture::Set(v) => setter.set_parameter(param, v.clamp(-1.0, 1.0)),
                Gesture::End => setter.end_set_parameter(param),
            }
            None
        }
        Action::Select(index) => {
            set_once(setter, &params.selected, *index as i32 + 1);
            // Clicking a take is asking to hear it.
            if !params.listen.value().plays_take() {
                set_once(setter, &params.listen, Listen::Take);
            }
            None
        }
        Action::Keep { generation, index } => send(
            commands,
            Command::Keep {
                generation: *generation,
                take: *index,
            },
        ),
        Action::Forget(index) => send(commands, Command::Forget { index: *index }),
        Action::NewTakes { after_error } => {
            let seed = params.seed.value();
            let next = if seed >= 99_999 { 0 } else { seed + 1 };
            set_once(setter, &params.seed, next);
            // After a failed request the worker waits for a change or an
            // explicit retry; the seed change is one, this makes it certain.
            if *after_error {
                send(commands, Command::Regenerate)
            } else {
                None
            }
        }
        Action::Export => send(commands, Command::Export),
        Action::LoadModel(path) => {
            let path = path.trim();
            if path.is_empty() {
                Some("Type the path of a model package folder first (the folder that holds manifest.json).".into())
            } else {
                send(commands, Command::LoadModel(PathBuf::from(path)))
            }
        }
        Action::UseBuiltinModel => send(commands, Command::UseBuiltinModel),
        Action::Listen(l) => {
            set_once(setter, &params.listen, *l);
            None
        }
        Action::PromptBars(n) => {
            set_once(setter, &params.prompt_bars, (*n).clamp(1, 4));
            None
        }
        Action::Takes(n) => {
            set_once(setter, &params.takes, *n);
            None
        }
        Action::Spread(v) => {
            set_once(setter, &params.spread, *v);
            None
        }
        Action::Seed(n) => {
            set_once(setter, &params.seed, *n);
            None
        }
        Action::Key(t) => {
            set_once(setter, &params.key, *t);
            None
        }
        Action::Scale(v) => {
            set_once(setter, &params.scale, *v);
            None
        }
        Action::Hold { slot, on } => {
            set_once(setter, params.hold_params()[(*slot).min(5)], *on);
            None
        }
        Action::Leeway(v) => {
            set_once(setter, &params.hold_leeway, v.clamp(0.25, 4.0));
            None
        }
        Action::Aim(a) => {
            set_once(setter, &params.aim, *a);
            None
        }
        Action::AimValue { attribute, value } => {
            set_once(setter, params.aim_lane(*attribute), *value);
            None
        }
        Action::BlendToward(n) => {
            set_once(setter, &params.blend_toward, (*n).max(0));
            None
        }
        Action::BlendAmount(gesture) => {
            let param = &params.blend;
            match *gesture {
                Gesture::Begin => setter.begin_set_parameter(param),
                Gesture::Set(v) => setter.set_parameter(param, v.clamp(0.0, 1.0)),
                Gesture::End => setter.end_set_parameter(param),
            }
            None
        }
        Action::BlendPath(p) => {
            set_once(setter, &params.blend_path, *p);
            None
        }
        // Presses are run by the editor over several frames.
        Action::Arm | Action::Grab => None,
    }
}

/// Queues a command for the worker without waiting.
pub fn send(commands: &Sender<Command>, command: Command) -> Option<String> {
    match commands.try_send(command) {
        Ok(()) => None,
        Err(TrySendError::Full(_)) => {
            Some("Nudgebar is still busy with earlier requests; try again in a moment.".into())
        }
        Err(TrySendError::Disconnected(_)) => Some(
            "The background worker is not running, so this could not be done; reload the plugin."
                .into(),
        ),
    }
}
