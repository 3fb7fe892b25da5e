//! `Nudgebar::process` driven directly (no host), every call inside
//! `assert_no_alloc` — the same guard nice-plug's `assert_process_allocs`
//! puts around `process()` in a host, so any allocation or free aborts the
//! test binary. Fast and fine-grained next to the CLAP-host tests in
//! `tests/`: takes heard on the right samples, and a long randomized run
//! (notes, automation, transport jumps, deactivation) that must never leave
//! a note hanging.

mod support;

use nice_plug::context::process::SendEventError;
use nice_plug::prelude::*;
use nudgebar::params::{ids, Listen, NudgebarParams};
use nudgebar::Nudgebar;
use nudgebar_music::TimeSignature;
use std::sync::Arc;
use std::time::{Duration, Instant};

const SR: f32 = 48_000.0;

/// A host's process context, reduced to what the plugin calls.
struct Host {
    transport: Transport,
    input: Vec<NoteEvent<()>>,
    next: usize,
    output: Vec<NoteEvent<()>>,
}

impl Host {
    fn new() -> Host {
        // Preallocated: the context must not allocate inside the guard either.
        Host {
            transport: Transport::new(SR),
            input: Vec::with_capacity(20_000),
            next: 0,
            output: Vec::with_capacity(40_000),
        }
    }
}

impl ProcessContext<Nudgebar> for Host {
    fn plugin_api(&self) -> PluginApi {
        PluginApi::Clap
    }
    fn execute_background(&self, _task: ()) {}
    fn execute_gui(&self, _task: ()) {}
    fn transport(&self) -> &Transport {
        &self.transport
    }
    fn next_event(&mut self) -> Option<NoteEvent<()>> {
        let e = self.input.get(self.next).copied();
        self.next += 1;
        e
    }
    fn try_send_event(
        &mut self,
        event: NoteEvent<()>,
    ) -> Result<(), (NoteEvent<()>, SendEventError)> {
        if self.output.len() == self.output.capacity() {
            return Err((event, SendEventError::HostBufferFull));
        }
        self.output.push(event);
        Ok(())
    }
    fn set_latency_samples(&self, _samples: u32) {}
    fn request_restart(&self) {}
    fn set_current_voice_capacity(&self, _capacity: u32) {}
}

struct Activation;

impl ActivateContext<Nudgebar> for Activation {
    fn plugin_api(&self) -> PluginApi {
        PluginApi::Clap
    }
    fn execute(&self, _task: ()) {}
    fn set_latency_samples(&self, _samples: u32) {}
    fn set_current_voice_capacity(&self, _capacity: u32) {}
}

/// The plugin, activated, with the shell's test model built in.
fn plugin() -> Nudgebar {
    let mut p = Nudgebar::with_builtin_model(Arc::new(|| Ok(support::package())));
    activate(&mut p);
    p
}

fn activate(p: &mut Nudgebar) {
    let config = BufferConfig {
        sample_rate: SR,
        min_buffer_size: None,
        max_buffer_size: 4096,
        process_mode: ProcessMode::Realtime,
    };
    assert!(p.activate(&AudioIOLayout::const_default(), &config, &mut Activation));
    p.reset();
}

fn set(params: &NudgebarParams, id: &str, plain: f32) {
    let (_, ptr, _) = params
        .param_map()
        .into_iter()
        .find(|(i, _, _)| i == id)
        .unwrap_or_else(|| panic!("no {id}"));
    unsafe { ptr._internal_set_normalized_value(ptr.preview_normalized(plain)) };
}

/// Runs one block of `frames` samples with `host.input` as its events;
/// returns the output events, with timings checked to lie in the block.
fn block(p: &mut Nudgebar, host: &mut Host, frames: usize) -> Vec<NoteEvent<()>> {
    host.input.sort_by_key(|e| e.timing());
    host.next = 0;
    host.output.clear();
    let mut buffer = Buffer::default();
    unsafe { buffer.set_slices(frames, |slices| slices.clear()) };
    let mut aux = AuxiliaryBuffers {
        inputs: &mut [],
        outputs: &mut [],
    };
    nice_assert_no_alloc::assert_no_alloc(|| {
        p.process(&mut buffer, &mut aux, host);
    });
    host.input.clear();
    for e in &host.output {
        assert!(
            (e.timing() as usize) < frames.max(1),
            "event outside the block: {e:?} in {frames}"
        );
    }
    host.output.clone()
}

/// Note-on/off bookkeeping over the whole output stream.
#[derive(Default)]
struct Ledger {
    on: std::collections::BTreeMap<(u8, u8), u64>,
    /// (absolute sample, key) of every note-on.
    starts: Vec<(u64, u8)>,
}

impl Ledger {
    fn take(&mut self, at: u64, events: &[NoteEvent<()>]) {
        let mut last = 0;
        for e in events {
            assert!(e.timing() >= last, "output not sorted: {events:?}");
            last = e.timing();
            match *e {
                NoteEvent::NoteOn {
                    channel,
                    key,
                    timing,
                    ..
                } => {
                    let k = (channel.number().unwrap(), key.number().unwrap());
                    assert!(
                        !self.on.contains_key(&k),
                        "second note-on for sounding {k:?}"
                    );
                    self.on.insert(k, at + timing as u64);
                    self.starts.push((at + timing as u64, k.1));
                }
                NoteEvent::NoteOff { channel, key, .. } => {
                    let k = (channel.number().unwrap(), key.number().unwrap());
                    assert!(self.on.remove(&k).is_some(), "note-off for silent {k:?}");
                }
                _ => {}
            }
        }
    }
}

fn on(timing: u32, key: u8) -> NoteEvent<()> {
    NoteEvent::NoteOn {
        timing,
        voice_id: nice_plug::midi::VoiceID::Wildcard,
        channel: nice_plug::midi::Channel::Number(0),
        key: nice_plug::midi::Key::Number(key),
        velocity: 0.8,
    }
}

fn off(timing: u32, key: u8) -> NoteEvent<()> {
    NoteEvent::NoteOff {
        timing,
        voice_id: nice_plug::midi::VoiceID::Wildcard,
        channel: nice_plug::midi::Channel::Number(0),
        key: nice_plug::midi::Key::Number(key),
        velocity: 0.0,
    }
}

/// Plays a one-bar prompt with the transport running from beat 0 (capture
/// armed at the downbeat), waits for takes, then listens to take 1 for two
/// loops: each take note must start on its sample, bar-locked.
fn takes_are_heard_on_their_samples(tempo: f64, ts: TimeSignature) {
    let mut p = plugin();
    let params = p.params_arc();
    let shared = p.shared();
    let mut host = Host::new();
    host.transport.playing = true;
    host.transport.tempo = Some(tempo);
    host.transport.time_sig_numerator = Some(ts.numerator as i32);
    host.transport.time_sig_denominator = Some(ts.denominator as i32);
    let spb = SR as f64 * 60.0 / tempo;
    let bar = ts.quarters_per_measure();
    let frames = 512usize;
    let mut sample: u64 = 0;
    let mut ledger = Ledger::default();
    let run = |p: &mut Nudgebar,
               host: &mut Host,
               ledger: &mut Ledger,
               sample: &mut u64,
               notes: &[(f64, f64, u8)]| {
        let b0 = *sample as f64 / spb;
        let b1 = (*sample + frames as u64) as f64 / spb;
        for &(s, l, k) in notes {
            if s >= b0 && s < b1 {
                host.input.push(on(((s - b0) * spb) as u32, k));
            }
            if s + l >= b0 && s + l < b1 {
                host.input.push(off(((s + l - b0) * spb) as u32, k));
            }
        }
        host.transport.pos_beats = Some(b0);
        let out = block(p, host, frames);
        ledger.take(*sample, &out);
        *sample += frames as u64;
    };

    set(&params, ids::LISTEN, 1.0); // Take only: input is captured, not heard
    set(&params, ids::ARM, 1.0);
    let prompt: Vec<(f64, f64, u8)> = (0..(ts.numerator as usize))
        .map(|i| (i as f64 * bar / ts.numerator as f64, 0.4, 60 + 2 * i as u8))
        .collect();
    while (sample as f64 / spb) < bar + 0.01 {
        run(&mut p, &mut host, &mut ledger, &mut sample, &prompt);
    }
    assert!(ledger.starts.is_empty(), "input is not heard in Take mode");
    let deadline = Instant::now() + Duration::from_secs(60);
    while shared
        .audio
        .generation
        .load(std::sync::atomic::Ordering::Relaxed)
        == 0
    {
        assert!(Instant::now() < deadline, "no takes: {:#?}", shared.view());
        run(&mut p, &mut host, &mut ledger, &mut sample, &[]);
        std::thread::sleep(Duration::from_millis(2));
    }
    let view = shared.view();
    let take = view.takes[0].phrase.clone();
    assert_eq!(take.time_signature, ts);
    // Listen for two whole loops from the next loop start.
    let first_loop = ((sample as f64 / spb) / bar).ceil() * bar;
    let heard_from = ledger.starts.len();
    while (sample as f64 / spb) < first_loop + 2.0 * bar {
        run(&mut p, &mut host, &mut ledger, &mut sample, &[]);
    }
    let heard: Vec<(u64, u8)> = ledger.starts[heard_from..]
        .iter()
        .copied()
        .filter(|(s, _)| {
            (*s as f64) >= first_loop * spb - 1.0
                && (*s as f64) < (first_loop + 2.0 * bar) * spb - 1.0
        })
        .collect();
    let want: Vec<(u64, u8)> = (0..2)
        .flat_map(|k| {
            take.notes.iter().map(move |n| {
                (
                    ((first_loop + k as f64 * bar + n.onset) * spb).round() as u64,
                    n.pitch,
                )
            })
        })
        .collect();
    assert_eq!(
        heard.len(),
        want.len(),
        "{tempo} BPM {ts}: heard {heard:?}, want {want:?}"
    );
    for (h, w) in heard.iter().zip(&want) {
        assert_eq!(h.1, w.1);
        assert!(h.0.abs_diff(w.0) <= 1, "{tempo} BPM {ts}: {h:?} vs {w:?}");
    }
    // The host suspends and resumes the track: the takes stay, and the next
    // loop is heard at once (nothing needs to be remade by the worker).
    p.deactivate();
    activate(&mut p);
    let resumed_from = ledger.starts.len();
    let next_loop = ((sample as f64 / spb) / bar).ceil() * bar;
    while (sample as f64 / spb) < next_loop + bar {
        run(&mut p, &mut host, &mut ledger, &mut sample, &[]);
    }
    let generation = shared
        .audio
        .generation
        .load(std::sync::atomic::Ordering::Relaxed);
    assert_eq!(generation, view.generation, "no new set was needed");
    assert!(
        ledger.starts.len() - resumed_from >= take.notes.len(),
        "the take plays on after reactivation"
    );
    // Stopping the transport silences everything.
    host.transport.playing = false;
    run(&mut p, &mut host, &mut ledger, &mut sample, &[]);
    assert!(
        ledger.on.is_empty(),
        "notes left sounding after stop: {:?}",
        ledger.on
    );
}

#[test]
fn takes_are_heard_bar_locked_at_120_in_4_4() {
    takes_are_heard_on_their_samples(120.0, TimeSignature::FOUR_FOUR);
}

#[test]
fn takes_are_heard_bar_locked_at_97_in_3_4() {
    // A 3/4 bar fits the 4/4 model's grid as 12 of its 16 steps.
    takes_are_heard_on_their_samples(97.0, TimeSignature::new(3, 4).unwrap());
}

/// A small deterministic generator (no dependency needed for a test).
struct Lcg(u64);

impl Lcg {
    fn next(&mut self) -> u64 {
        self.0 = self
            .0
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        self.0 >> 33
    }
    fn below(&mut self, n: u64) -> u64 {
        self.next() % n.max(1)
    }
}

/// Every parameter, looked up once: the runs below automate them every
/// block, and `param_map()` builds a list each time it is called.
struct Knobs(Vec<(String, ParamPtr)>);

impl Knobs {
    fn of(params: &NudgebarParams) -> Knobs {
        Knobs(
            params
                .param_map()
                .into_iter()
                .map(|(id, ptr, _)| (id, ptr))
                .collect(),
        )
    }

    fn set(&self, id: &str, plain: f32) {
        let (_, ptr) = self
            .0
            .iter()
            .find(|(i, _)| i == id)
            .unwrap_or_else(|| panic!("no {id}"));
        unsafe { ptr._internal_set_normalized_value(ptr.preview_normalized(plain)) };
    }

    /// Sets every parameter except `keep_id` to a random normalized value.
    fn randomize(&self, rng: &mut Lcg, keep_id: Option<&str>) {
        for (id, ptr) in &self.0 {
            if Some(id.as_str()) == keep_id {
                continue;
            }
            let v = rng.below(1001) as f32 / 1000.0;
            unsafe { ptr._internal_set_normalized_value(v) };
        }
    }
}

/// A seeded random session of `blocks` blocks: block sizes 1 … 4096 frames,
/// random notes in and a flood of 10,000 events now and then, every
/// parameter automated every block (the listen mode held at `mode` when
/// given, else automated too), the transport playing, stopping, jumping
/// back, changing tempo and metre, and now and then a deactivate/activate
/// cycle. Every block runs inside the allocation guard; the output must
/// stay inside its block, sorted, and balanced: no second note-on for a
/// sounding key, no note-off for a silent one, nothing left sounding when
/// the input is released and the transport stops.
fn random_session(mode: Option<Listen>, blocks: usize, seed: u64) {
    let mut p = plugin();
    let knobs = Knobs::of(&p.params_arc());
    let mut host = Host::new();
    let mut rng = Lcg(seed);
    let mut ledger = Ledger::default();
    let mut held = [false; 128];
    let mut pos = 0.0f64;
    let mut sample = 0u64;
    for b in 0..blocks {
        let frames = 1 + rng.below(4096) as usize;
        let tempo = [120.0, 97.0, 174.0, 60.0][(b / 900) % 4];
        host.transport.tempo = Some(tempo);
        let (n, d) = [(4, 4), (3, 4), (6, 8), (7, 8)][(b / 1500) % 4];
        host.transport.time_sig_numerator = Some(n);
        host.transport.time_sig_denominator = Some(d);
        match rng.below(200) {
            0 => host.transport.playing = !host.transport.playing,
            1 => pos = rng.below(64) as f64 * 0.5,
            _ => {}
        }
        host.transport.pos_beats = Some(pos);
        // Automation every block: everything at random, but bypass, capture
        // and keep only now and then (a session that is always bypassed or
        // always capturing would test little).
        knobs.randomize(&mut rng, mode.map(|_| ids::LISTEN));
        if let Some(m) = mode {
            knobs.set(ids::LISTEN, m as usize as f32);
        }
        knobs.set(ids::BYPASS, (rng.below(50) == 0) as u8 as f32);
        knobs.set(ids::ARM, (rng.below(40) == 0) as u8 as f32);
        knobs.set(ids::GRAB, (rng.below(40) == 0) as u8 as f32);
        knobs.set(ids::KEEP, (rng.below(60) == 0) as u8 as f32);
        let count = if rng.below(2000) == 0 {
            10_000
        } else {
            rng.below(6) as usize
        };
        // Times first, in order, then keys: a key struck and released in
        // the same block gets its on before its off, as a player's would.
        let mut times: Vec<u32> = (0..count)
            .map(|_| rng.below(frames as u64) as u32)
            .collect();
        times.sort_unstable();
        for t in times {
            let key = 48 + rng.below(24) as u8;
            if held[key as usize] {
                host.input.push(off(t, key));
            } else {
                host.input.push(on(t, key));
            }
            held[key as usize] = !held[key as usize];
        }
        let out = block(&mut p, &mut host, frames);
        ledger.take(sample, &out);
        sample += frames as u64;
        pos += frames as f64 / (SR as f64 * 60.0 / tempo);
        if rng.below(3000) == 0 {
            p.deactivate();
            activate(&mut p);
        }
        if b % 500 == 0 {
            // Give the worker a moment, as real time would.
            std::thread::sleep(Duration::from_millis(1));
        }
    }
    for key in 0..128u8 {
        if held[key as usize] {
            host.input.push(off(0, key));
        }
    }
    host.transport.playing = false;
    let out = block(&mut p, &mut host, 64);
    ledger.take(sample, &out);
    assert!(ledger.on.is_empty(), "left sounding: {:?}", ledger.on);
    assert!(
        ledger.starts.len() > 1000,
        "the run played notes ({})",
        ledger.starts.len()
    );
}

/// Blocks per run: the note-consistency category of a CLAP validator's
/// checks, at 10^5 blocks in every listening mode.
const RANDOM_BLOCKS: usize = 100_000;

#[test]
fn random_sessions_hearing_the_input_stay_balanced_and_never_allocate() {
    random_session(Some(Listen::Input), RANDOM_BLOCKS, 0x5eed_0001);
}

#[test]
fn random_sessions_hearing_a_take_stay_balanced_and_never_allocate() {
    random_session(Some(Listen::Take), RANDOM_BLOCKS, 0x5eed_0002);
}

#[test]
fn random_sessions_hearing_both_stay_balanced_and_never_allocate() {
    random_session(Some(Listen::Both), RANDOM_BLOCKS, 0x5eed_0003);
}

#[test]
fn random_sessions_switching_modes_stay_balanced_and_never_allocate() {
    random_session(None, RANDOM_BLOCKS, 0x5eed_0004);
}

/// Allocates inside the guard: must abort. Run only as a child process by
/// the test below (it kills its own process when the guard works).
#[test]
#[ignore = "run in a child process by the_allocation_guard_is_live_in_this_binary"]
fn allocation_canary() {
    nice_assert_no_alloc::assert_no_alloc(|| {
        let v: Vec<u8> = Vec::with_capacity(64);
        std::hint::black_box(v);
    });
}

/// The tests above prove nothing unless the guard is really active here
/// (it needs nice-plug's global allocator, which only exists in debug
/// builds with `assert_process_allocs`): an allocation under it must abort.
#[test]
fn the_allocation_guard_is_live_in_this_binary() {
    let out = std::process::Command::new(std::env::current_exe().unwrap())
        .args([
            "--exact",
            "allocation_canary",
            "--ignored",
            "--test-threads=1",
            "--nocapture",
        ])
        .output()
        .unwrap();
    assert!(
        !out.status.success(),
        "an allocation inside assert_no_alloc did not abort the process"
    );
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("alloc"), "{stderr}");
}
