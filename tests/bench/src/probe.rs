//! The audio-thread scenarios `process-probe` plays, hosting the plugin
//! in-process through the CLAP test host (`nudgebar_tests::host`).
//!
//! Every scenario first brings the plugin into its state (warm-up blocks,
//! waiting for the worker where takes are needed), then runs the measured
//! blocks through [`measured_block`] only. Callgrind is started with
//! `--collect-atstart=no --toggle-collect=<measured_block>`, so only those
//! blocks are counted, and the count is read off the inclusive cost of
//! nice-plug's CLAP `process` entry point: the plugin's whole `process()`,
//! including its calls back into the host's event lists, without the test
//! host's own bookkeeping.

use anyhow::{anyhow, bail, Result};
use nice_plug::params::Params;
use nudgebar_music::{Note, Phrase, TimeSignature};
use nudgebar_tests::host::{
    HarnessError, HostTransport, HostedPlugin, InputEvent, OutputKind, ParamSummary, Session,
    StateBlob,
};
use std::path::Path;
use std::time::Duration;

pub const SAMPLE_RATE: f64 = 48_000.0;
/// Name of the measured function, as callgrind demangles it.
pub const MEASURED_FN: &str = "nudgebar_bench::probe::measured_block";
/// The plugin's CLAP process entry point, as callgrind demangles it.
pub const PROCESS_FN: &str = "nice_plug::wrapper::clap::wrapper::Wrapper<P>::process";
/// Input events in the flood block.
pub const FLOOD_EVENTS: usize = 10_000;

/// What the audio thread is doing while it is measured.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scenario {
    /// Transport playing, no input, nothing captured, no takes.
    Idle,
    /// An armed 4-bar capture recording a ferry call played bar after bar.
    Capturing,
    /// The selected take looping on the host's bars.
    Auditioning,
    /// One block with 10,000 input events while a take plays with the input
    /// passing through and a capture armed: the worst case.
    Flood,
}

impl Scenario {
    pub const ALL: [Scenario; 4] = [
        Scenario::Idle,
        Scenario::Capturing,
        Scenario::Auditioning,
        Scenario::Flood,
    ];

    pub fn key(self) -> &'static str {
        match self {
            Scenario::Idle => "idle",
            Scenario::Capturing => "capturing",
            Scenario::Auditioning => "auditioning",
            Scenario::Flood => "flood",
        }
    }

    pub fn from_key(key: &str) -> Option<Scenario> {
        Scenario::ALL.into_iter().find(|s| s.key() == key)
    }

    pub fn needs_model(self) -> bool {
        matches!(self, Scenario::Auditioning | Scenario::Flood)
    }
}

/// Measured blocks for a block size: enough that more than a bar of music
/// passes at 120 BPM, so per-bar work is in the average.
pub fn blocks_for(frames: u32) -> u32 {
    match frames {
        0..=127 => 4000,
        128..=1023 => 1000,
        _ => 200,
    }
}

/// Processes one block; the only function callgrind counts in.
#[inline(never)]
pub fn measured_block(session: &mut Session, frames: u32) -> Result<(), HarnessError> {
    session.process_block(frames).map(|_| ())
}

/// The plugin's parameters, by their stable ids.
struct Controls {
    arm: ParamSummary,
    bars: ParamSummary,
    listen: ParamSummary,
}

fn param(plugin: &mut HostedPlugin, id: &str) -> Result<ParamSummary> {
    let defaults = nudgebar::params::NudgebarParams::default();
    let name = defaults
        .param_map()
        .into_iter()
        .find(|(i, _, _)| i == id)
        .map(|(_, ptr, _)| unsafe { ptr.name() }.to_string())
        .ok_or_else(|| anyhow!("the plugin has no parameter {id:?}"))?;
    plugin
        .param_named(&name)
        .ok_or_else(|| anyhow!("CLAP lists no parameter named {name:?}"))
}

fn set_text(s: &mut Session, p: &ParamSummary, text: &str) -> Result<()> {
    let v = s
        .plugin
        .text_to_value(p.id, text)
        .ok_or_else(|| anyhow!("{} does not take {text:?}", p.name))?;
    s.set_param(p.id, v);
    Ok(())
}

fn pulse(s: &mut Session, p: &ParamSummary, frames: u32) -> Result<()> {
    s.set_param(p.id, p.max);
    s.process_block(frames)?;
    s.set_param(p.id, p.min);
    s.process_block(frames)?;
    Ok(())
}

/// An invented Wrenmouth "lamp climb" call: a leap up, then steps on a
/// rope cell and bell cells.
pub fn ferry_call() -> Phrase {
    let rows = [
        (60u8, 0.0, 0.75, 100u8),
        (67, 0.75, 0.25, 84),
        (65, 1.0, 0.5, 90),
        (67, 1.5, 0.5, 88),
        (69, 2.0, 0.5, 96),
        (71, 2.5, 0.5, 86),
        (72, 3.0, 1.0, 104),
    ];
    Phrase::new(
        TimeSignature::FOUR_FOUR,
        1,
        rows.iter()
            .map(|&(p, o, d, v)| Note::new(p, o, d, v))
            .collect(),
    )
}

/// Sets up `scenario` with blocks of `frames`, then runs `blocks` measured
/// blocks. Returns the number of `process()` calls measured.
pub fn run(scenario: Scenario, frames: u32, blocks: u32, model: Option<&Path>) -> Result<u32> {
    let mut plugin = HostedPlugin::in_process(&nudgebar::clap_entry, Some(nudgebar::CLAP_ID))?;
    if let Some(folder) = model {
        use_model_folder(&mut plugin, folder)?;
    }
    let c = Controls {
        arm: param(&mut plugin, nudgebar::params::ids::ARM)?,
        bars: param(&mut plugin, nudgebar::params::ids::PROMPT_BARS)?,
        listen: param(&mut plugin, nudgebar::params::ids::LISTEN)?,
    };
    let mut transport = HostTransport::new(120.0, TimeSignature::FOUR_FOUR);
    transport.playing = true;
    let max_block = frames.max(512);
    let mut s = Session::start(plugin, SAMPLE_RATE, max_block, transport)?;
    let call = ferry_call();

    if scenario.needs_model() {
        if model.is_none() {
            bail!("the {} scenario needs a model folder", scenario.key());
        }
        // Capture bar 1 and wait until the selected take sounds.
        s.run_beats(0.5)?;
        pulse(&mut s, &c.arm, 512)?;
        s.play_phrase_at_bar(&call, 1);
        s.run_to_position(s.transport.bar_start(2))?;
        set_text(
            &mut s,
            &c.listen,
            if scenario == Scenario::Flood {
                "Take + input"
            } else {
                "Take"
            },
        )?;
        let from = s.clock();
        s.wait_for("the first take to sound", Duration::from_secs(600), |s| {
            s.timeline
                .iter()
                .any(|e| e.sample >= from && matches!(e.kind, OutputKind::NoteOn { .. }))
        })?;
    }
    match scenario {
        Scenario::Idle | Scenario::Auditioning => {}
        Scenario::Capturing => {
            // Four bars armed, the call played in every bar from bar 1 on,
            // measured from the first recorded downbeat.
            set_text(&mut s, &c.bars, "4")?;
            s.run_beats(0.5)?;
            pulse(&mut s, &c.arm, 512)?;
            let bar = s.transport.bar_number_at(s.transport.position) + 1;
            for b in bar..bar + 40 {
                s.play_phrase_at_bar(&call, b);
            }
            s.run_to_position(s.transport.bar_start(bar))?;
        }
        Scenario::Flood => {
            pulse(&mut s, &c.arm, 512)?;
            let at = s.clock();
            for i in 0..FLOOD_EVENTS {
                let key = 36 + (i / 2 % 48) as u8;
                let when = at + (i as u64 * frames as u64 / FLOOD_EVENTS as u64);
                let event = if i % 2 == 0 {
                    InputEvent::note_on(key, 90)
                } else {
                    InputEvent::note_off(key)
                };
                s.schedule(when, event);
            }
            measured_block(&mut s, frames)?;
            return Ok(1);
        }
    }
    // Warm-up at the measured size, so first-call effects are not counted.
    for _ in 0..8 {
        s.process_block(frames)?;
    }
    for _ in 0..blocks {
        measured_block(&mut s, frames)?;
    }
    if scenario == Scenario::Auditioning
        && !s
            .timeline
            .iter()
            .any(|e| matches!(e.kind, OutputKind::NoteOn { .. }))
    {
        bail!("no take notes sounded while auditioning");
    }
    Ok(blocks)
}

/// Points the plugin at a model package folder through its saved session,
/// as reopening a project that uses it does.
fn use_model_folder(plugin: &mut HostedPlugin, folder: &Path) -> Result<()> {
    let mut blob = StateBlob::parse(&plugin.save_state()?)?;
    let mut session = blob
        .field("session")
        .ok_or_else(|| anyhow!("the plugin saved no session field"))?;
    session["model_path"] = serde_json::Value::String(folder.to_string_lossy().into_owned());
    blob.set_field("session", &session);
    plugin.load_state(&blob.to_bytes())?;
    Ok(())
}
