//! Hostile saved sessions: thousands of seeded corruptions of a real session
//! blob fed to the plugin's session loader (`nudgebar::state`, which is
//! `nudgebar_contract::session`): byte flips, cuts and splices of the JSON
//! text, and value swaps inside the parsed JSON (wrong types, huge and
//! negative numbers, deep nesting). The `session` fuzz target explores the
//! same loader without a plan; this test runs the same 3000 mutants in
//! every test run.
//!
//! Properties, for every mutant: the loader never panics; what it keeps is
//! valid (1–4 measures, a real metre, MIDI-range notes inside the phrase, at
//! most MAX_KEPT takes); and what it loaded saves and reloads identically,
//! with nothing more dropped.

use nudgebar::state::{KeptTake, SavedPrompt, SessionState, Shaping, TakeSettings, MAX_KEPT};
use nudgebar_engine::ModelIdentity;
use nudgebar_music::attributes::Readout;
use nudgebar_music::{Note, Phrase, TimeSignature, MAX_MEASURES};
use nudgebar_tests::hostile::noise_bytes;
use serde_json::{json, Value};
use std::panic::{catch_unwind, AssertUnwindSafe};

/// Mutants per kind; the loader takes microseconds each.
const MUTANTS: u64 = 1500;

fn take(name: &str, ts: TimeSignature, notes: Vec<Note>) -> KeptTake {
    let phrase = Phrase::new(ts, 1, notes);
    KeptTake {
        name: name.into(),
        attributes: Readout::of(&phrase),
        change: Readout::default(),
        phrase,
        settings: TakeSettings {
            offsets: vec![("note_density".into(), 0.5), ("contour".into(), -0.25)],
            takes: 4,
            spread: 0.5,
            seed: 17,
            index: 1,
            shaping: Shaping {
                key: Some("G Mixolydian".into()),
                holds: vec![("pitch_range".into(), 2.0)],
                ..Shaping::default()
            },
        },
        latent: vec![0.75, -1.5, 0.125, 2.0],
        stream: 3,
        model: ModelIdentity {
            name: "Wrenmouth ferry calls".into(),
            fingerprint: "00c0ffee00c0ffee".into(),
        },
        tempo: 104.0,
    }
}

fn session() -> SessionState {
    let four = TimeSignature::FOUR_FOUR;
    let seven = TimeSignature::new(7, 8).unwrap();
    SessionState {
        prompt: Some(SavedPrompt {
            phrase: Phrase::new(
                four,
                2,
                vec![Note::new(67, 0.0, 0.5, 90), Note::new(72, 4.5, 1.0, 70)],
            ),
            tempo: 104.0,
        }),
        kept: vec![
            take(
                "Lamp climb",
                four,
                vec![Note::new(60, 0.0, 1.0, 96), Note::new(64, 1.0, 1.0, 80)],
            ),
            take(
                "Gull chatter",
                four,
                (0..8)
                    .map(|i| Note::new(70 + i % 3, i as f64 * 0.5, 0.25, 88))
                    .collect(),
            ),
            take("Slack tide", seven, vec![Note::new(55, 0.0, 3.5, 64)]),
        ],
        model_path: Some("/home/composer/models/wrenmouth".into()),
        ..SessionState::default()
    }
}

/// A deterministic stream of numbers from the shared SplitMix64 generator.
struct Dice(Vec<u8>, usize);

impl Dice {
    fn new(seed: u64) -> Dice {
        Dice(noise_bytes(seed, 4096), 0)
    }
    fn below(&mut self, n: usize) -> usize {
        if self.1 + 8 > self.0.len() {
            self.1 = 0;
            self.0 = noise_bytes(u64::from_le_bytes(self.0[..8].try_into().unwrap()), 4096);
        }
        let v = u64::from_le_bytes(self.0[self.1..self.1 + 8].try_into().unwrap());
        self.1 += 8;
        (v % n.max(1) as u64) as usize
    }
}

fn byte_mutant(text: &str, dice: &mut Dice) -> Vec<u8> {
    let mut b = text.as_bytes().to_vec();
    match dice.below(4) {
        0 => {
            for _ in 0..1 + dice.below(4) {
                let at = dice.below(b.len());
                b[at] ^= 1 << dice.below(8);
            }
        }
        1 => b.truncate(dice.below(b.len())),
        2 => {
            let (from, to) = (dice.below(b.len()), dice.below(b.len()));
            let len = dice.below(64);
            let piece: Vec<u8> = b[from..(from + len).min(b.len())].to_vec();
            b.splice(to..to, piece);
        }
        _ => {
            let at = dice.below(b.len());
            b.insert(at, b"{}[]\",:0-e9"[dice.below(11)]);
        }
    }
    b
}

/// A JSON value of a surprising kind.
fn odd_value(dice: &mut Dice) -> Value {
    match dice.below(9) {
        0 => Value::Null,
        1 => json!(-1),
        2 => json!(1e308),
        3 => json!(u64::MAX),
        4 => json!("garbage"),
        5 => json!([]),
        6 => json!({}),
        7 => json!(0),
        _ => {
            let mut v = json!(1);
            for _ in 0..100 {
                v = json!([v]);
            }
            v
        }
    }
}

/// Replaces one randomly chosen value anywhere in the tree.
fn value_mutant(tree: &Value, dice: &mut Dice) -> Value {
    fn count(v: &Value) -> usize {
        1 + match v {
            Value::Array(a) => a.iter().map(count).sum(),
            Value::Object(o) => o.values().map(count).sum(),
            _ => 0,
        }
    }
    fn replace(v: &mut Value, target: &mut usize, with: &Value) -> bool {
        if *target == 0 {
            *v = with.clone();
            return true;
        }
        *target -= 1;
        match v {
            Value::Array(a) => a.iter_mut().any(|x| replace(x, target, with)),
            Value::Object(o) => o.values_mut().any(|x| replace(x, target, with)),
            _ => false,
        }
    }
    let mut out = tree.clone();
    let mut target = dice.below(count(tree));
    let with = odd_value(dice);
    replace(&mut out, &mut target, &with);
    out
}

/// Everything a loaded session holds must be usable as it is.
fn problems(s: &SessionState) -> Vec<String> {
    let mut found = Vec::new();
    let mut check = |what: &str, p: &Phrase| {
        let ok_metre =
            TimeSignature::new(p.time_signature.numerator, p.time_signature.denominator).is_ok();
        if !ok_metre || !(1..=MAX_MEASURES).contains(&p.measures) {
            found.push(format!("{what}: impossible phrase {p:?}"));
        }
        for n in &p.notes {
            let ok = n.pitch <= 127
                && (1..=127).contains(&n.velocity)
                && n.onset.is_finite()
                && n.onset >= 0.0
                && n.onset < p.len_beats()
                && n.duration.is_finite()
                && n.duration > 0.0;
            if !ok {
                found.push(format!("{what}: bad note {n:?}"));
            }
        }
    };
    if let Some(prompt) = &s.prompt {
        check("prompt", &prompt.phrase);
    }
    for t in &s.kept {
        check(&t.name, &t.phrase);
    }
    if s.kept.len() > MAX_KEPT {
        found.push(format!("{} kept takes", s.kept.len()));
    }
    found
}

fn check_mutant(label: &str, text: &str, failures: &mut Vec<String>) {
    let loaded = match catch_unwind(AssertUnwindSafe(|| SessionState::load_lenient(text))) {
        Ok(s) => s,
        Err(_) => {
            failures.push(format!("{label}: the loader panicked on {text:?}"));
            return;
        }
    };
    for p in problems(&loaded) {
        failures.push(format!("{label}: {p}"));
    }
    // What was loaded is now a valid session: saving it and loading it back
    // gives the same session, and nothing more is dropped.
    let saved = serde_json::to_string(&loaded).expect("a session saves");
    let again = SessionState::load_lenient(&saved);
    let expected = SessionState {
        load_report: Vec::new(),
        ..loaded.clone()
    };
    if again != expected {
        failures.push(format!(
            "{label}: reload differs or reports {:?}",
            again.load_report
        ));
    }
}

#[test]
fn corrupted_session_text_never_panics_and_keeps_only_valid_parts() {
    let text = serde_json::to_string(&session()).unwrap();
    let mut dice = Dice::new(0x5e55_1011);
    let mut failures = Vec::new();
    for i in 0..MUTANTS {
        let bytes = byte_mutant(&text, &mut dice);
        // The host hands nice-plug bytes; only UTF-8 text reaches our loader.
        let mutant = String::from_utf8_lossy(&bytes);
        check_mutant(&format!("byte mutant {i}"), &mutant, &mut failures);
    }
    assert!(
        failures.is_empty(),
        "{} failures, first: {:#?}",
        failures.len(),
        &failures[..failures.len().min(5)]
    );
}

#[test]
fn sessions_with_swapped_values_never_panic_and_keep_only_valid_parts() {
    let tree = serde_json::to_value(session()).unwrap();
    let mut dice = Dice::new(0x0dd_ba11);
    let mut failures = Vec::new();
    for i in 0..MUTANTS {
        let mutant = value_mutant(&tree, &mut dice);
        let text = mutant.to_string();
        check_mutant(&format!("value mutant {i}"), &text, &mut failures);
        // One swapped value damages at most one take: the loader reads part
        // by part, not all or nothing. (Unless the list itself was replaced.)
        let list_intact = mutant
            .get("kept")
            .and_then(Value::as_array)
            .is_some_and(|a| a.len() == 3);
        let kept = SessionState::load_lenient(&text).kept.len();
        if list_intact && kept < 2 {
            failures.push(format!(
                "value mutant {i}: one damaged value lost {} takes: {text}",
                3 - kept
            ));
        }
    }
    assert!(
        failures.is_empty(),
        "{} failures, first: {:#?}",
        failures.len(),
        &failures[..failures.len().min(5)]
    );
}
