//! Slider dragging: the plugin's own worker thread (`nudgebar::worker`,
//! with its channels from `nudgebar::link`) gets a prompt, then the density
//! slider moves every 16 ms (one 60 Hz editor frame) for two seconds while
//! a stand-in audio thread adopts take sets every millisecond, as
//! `process()` does at the start of each block. A second drag moves it
//! every 2 ms, as dense host automation can, so moves must coalesce.
//!
//! The slider is set the way nice-plug's wrapper sets it when a host or
//! the editor changes a parameter (`Param::_internal_set_plain_value`, an
//! atomic store); the worker reads the parameters whenever it is free, so
//! moves coalesce and nothing queues. What is checked: how many take sets
//! came during the drag, the longest wait between two, how long after the
//! last move its takes arrived, and that they are exactly the takes the
//! engine makes for the final slider value (latest wins).

use crate::models::BenchModel;
use anyhow::{anyhow, ensure, Result};
use nice_plug::params::InternalParamMut;
use nudgebar::buffers::TakeSet;
use nudgebar::link::{self, Command};
use nudgebar::params::{AxisBinding, NudgebarParams};
use nudgebar::status::Shared;
use nudgebar::worker;
use nudgebar_engine::{Engine, VariationRequest};
use nudgebar_music::Phrase;
use serde::Serialize;
use std::sync::Arc;
use std::time::{Duration, Instant};

/// Time between slider moves: one frame of a 60 Hz editor.
pub const MOVE_EVERY: Duration = Duration::from_millis(16);
/// Time between moves of host automation written densely (one per 2 ms),
/// faster than a request: the case where moves must coalesce.
pub const AUTOMATION_EVERY: Duration = Duration::from_millis(2);
/// Length of one drag.
pub const DRAG: Duration = Duration::from_secs(2);
/// Takes per request while dragging: the most a user can ask for.
pub const TAKES: i32 = 16;
/// Response within 0.1 s reads as immediate: J. Nielsen, *Usability
/// Engineering* (Academic Press, 1993), ch. 5 "response times" (from
/// memory); a rule of thumb, used here as the settle target.
pub const IMMEDIATE: Duration = Duration::from_millis(100);

#[derive(Debug, Clone, Serialize)]
pub struct DragReport {
    pub model: String,
    /// Bars in the prompt.
    pub bars: u8,
    pub moves: usize,
    pub move_every_ms: f64,
    /// Take sets the audio thread adopted during the drag.
    pub sets_during_drag: u64,
    /// Moves that never got their own request (coalesced).
    pub coalesced: u64,
    /// Longest time between two adopted sets during the drag, ms.
    pub longest_gap_ms: f64,
    /// From the last move until its takes were adopted, ms.
    pub settle_ms: f64,
    /// Commands waiting in the worker's queue, at most (slider moves are not queued).
    pub most_commands_waiting: usize,
    /// The final takes are the engine's takes for the final slider value.
    pub latest_wins: bool,
    pub keeps_up: bool,
}

/// Drags the density slider with a move every `every` for two seconds.
pub fn run(model: &BenchModel, prompt: &Phrase, every: Duration) -> Result<DragReport> {
    let moves = (DRAG.as_micros() / every.as_micros()) as usize;
    let params = Arc::new(NudgebarParams::default());
    // SAFETY (of the `_internal_set_plain_value` calls): nice-plug's
    // parameters are atomics; the wrapper makes the same call from any
    // thread when a host changes a value. Nothing else writes them here.
    unsafe {
        params.takes._internal_set_plain_value(TAKES);
    }
    let shared = Arc::new(Shared::default());
    let (mut audio, worker_link, commands) = link::channels();
    let package = model.package.clone();
    let builtin: worker::BuiltinModel = Arc::new(move || Ok(package.clone()));
    let handle = worker::spawn(worker_link, params.clone(), shared.clone(), builtin);
    let tempo = 120.0;
    commands
        .send(Command::SetPrompt {
            phrase: prompt.clone(),
            tempo,
        })
        .map_err(|_| anyhow!("the worker stopped before it got the prompt"))?;

    let mut current: Option<Box<TakeSet>> = None;
    let mut adopt = |current: &mut Option<Box<TakeSet>>| audio.adopt_takes(current);
    // The first takes (model load + first request) before the drag starts.
    let start = Instant::now();
    while current.is_none() {
        ensure!(
            start.elapsed() < Duration::from_secs(120),
            "the worker made no takes in two minutes: {:?}",
            shared
                .view()
                .request_error
                .clone()
                .or(shared.view().model_error.clone())
        );
        adopt(&mut current);
        std::thread::sleep(Duration::from_millis(1));
    }

    let slider = &params.axis1;
    let value = |i: usize| -0.75 + 1.5 * i as f32 / moves as f32;
    let mut most_commands = 0;
    let mut adoptions: Vec<Instant> = Vec::new();
    let drag_start = Instant::now();
    for i in 0..moves {
        unsafe {
            slider._internal_set_plain_value(value(i));
        }
        let next = drag_start + every * (i as u32 + 1);
        while Instant::now() < next {
            if adopt(&mut current) {
                adoptions.push(Instant::now());
            }
            most_commands = most_commands.max(commands.len());
            std::thread::sleep(Duration::from_millis(1));
        }
    }
    let last_move = drag_start + every * (moves as u32 - 1);
    let sets_during_drag = adoptions.len() as u64;

    // The engine's takes for the final slider value, made independently.
    let mut engine = Engine::new(model.package.clone()).map_err(|e| anyhow!("{e}"))?;
    let steering = params.steering();
    let attributes: Vec<_> = engine.axes().iter().map(|a| a.attribute).collect();
    let request = VariationRequest {
        offsets: AxisBinding::for_axes(&attributes).offsets(&steering.offsets, attributes.len()),
        takes: steering.takes,
        spread: steering.spread,
        seed: steering.seed,
        ..Default::default()
    };
    let expected: Vec<Phrase> = engine
        .vary(prompt, &request)
        .map_err(|e| anyhow!("{e}"))?
        .takes
        .into_iter()
        .map(|t| t.phrase)
        .collect();

    // Wait for the set whose takes are those (the engine run above took a
    // while, so it may already be there).
    let mut settled = None;
    let give_up = Instant::now() + Duration::from_secs(30);
    while settled.is_none() && Instant::now() < give_up {
        if adopt(&mut current) {
            adoptions.push(Instant::now());
        }
        let view = shared.view();
        let generation = current.as_ref().map_or(0, |s| s.generation);
        if view.generation == generation && !shared.busy.load(std::sync::atomic::Ordering::Acquire)
        {
            let got: Vec<&Phrase> = view.takes.iter().map(|t| &t.phrase).collect();
            if got.iter().copied().eq(expected.iter()) {
                settled = adoptions.last().copied().or(Some(Instant::now()));
            }
        }
        std::thread::sleep(Duration::from_millis(1));
    }
    drop(handle);

    let gaps = adoptions.windows(2).map(|w| w[1] - w[0]);
    let first_gap = adoptions.first().map(|t| *t - drag_start);
    let longest = gaps.chain(first_gap).max().unwrap_or(Duration::ZERO);
    let settle = settled.map(|t| t.saturating_duration_since(last_move));
    let latest_wins = settled.is_some();
    let settle_ms = settle.map_or(f64::INFINITY, |d| d.as_secs_f64() * 1e3);
    Ok(DragReport {
        model: model.name.clone(),
        bars: prompt.measures,
        moves,
        move_every_ms: every.as_secs_f64() * 1e3,
        sets_during_drag,
        coalesced: moves as u64 - sets_during_drag.min(moves as u64),
        longest_gap_ms: longest.as_secs_f64() * 1e3,
        settle_ms,
        most_commands_waiting: most_commands,
        latest_wins,
        keeps_up: latest_wins && settle.is_some_and(|d| d <= IMMEDIATE) && most_commands == 0,
    })
}
