//! The bench's tables, as Markdown (printed, and pasted into the README)
//! and the JSON they are made from (under target/bench/).

use crate::callgrind::AudioRow;
use crate::dragging::DragReport;
use crate::engine_rows::EngineReport;
use crate::growth::GrowthRow;
use crate::timing::Timing;
use std::fmt::Write;

/// Targets from the benchmarks issue.
pub const LOAD_TARGET_MS: f64 = 100.0;
pub const ORT_TARGET: f64 = 1.0;
pub const FLOP_TARGET: f64 = 5.0;
pub const IDLE_512_TARGET: f64 = 5_000.0;

fn us(t: &Timing) -> String {
    if t.best_us.is_nan() {
        return "—".into();
    }
    let f = |v: f64| {
        if v >= 10_000.0 {
            format!("{:.1} ms", v / 1e3)
        } else if v >= 100.0 {
            format!("{v:.0} µs")
        } else {
            format!("{v:.1} µs")
        }
    };
    format!("{} ({})", f(t.best_us), f(t.median_us))
}

fn ratio(r: Option<f64>) -> String {
    r.map_or("—".into(), |r| format!("{r:.2}×"))
}

fn verdict(ok: bool) -> &'static str {
    if ok {
        "met"
    } else {
        "missed"
    }
}

pub fn engine_table(r: &EngineReport) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "Engine, model **{}** ({:.2} M parameters; {} + {} multiply-adds per row for encoder + decoder). \
         onnxruntime {} on one thread. FLOP bound at the measured single-core peak of {:.1} GFLOP/s ({}, {} lanes). \
         Times: best round (median round), per call.\n",
        r.model,
        r.parameters as f64 / 1e6,
        r.encoder_macs_per_row,
        r.decoder_macs_per_row,
        r.onnxruntime_version,
        r.peak.flops_per_second / 1e9,
        r.peak.isa,
        r.peak.lanes
    );
    s.push_str("| operation | Nudgebar | onnxruntime | Nudgebar / onnxruntime | FLOP bound | Nudgebar / bound | outputs differ by | notes |\n");
    s.push_str("|---|---|---|---|---|---|---|---|\n");
    for row in &r.rows {
        let _ = writeln!(
            s,
            "| {} | {} | {} | {} | {} | {} | {} | {} |",
            row.name,
            us(&row.nudgebar),
            row.onnxruntime.as_ref().map_or("—".into(), us),
            ratio(row.ratio_to_onnxruntime),
            row.flop_bound_us
                .map_or("—".into(), |b| format!("{b:.2} µs")),
            ratio(row.ratio_to_flop_bound),
            row.max_abs_diff.map_or("—".into(), |d| format!("{d:.1e}")),
            row.note
        );
    }
    s
}

pub fn growth_table(rows: &[GrowthRow]) -> String {
    let mut s = String::from("Growth of a full request (best round (median round); relative to the first row of each group).\n\n");
    s.push_str("| grows with | request | time | relative | decoder rows | resampled takes |\n|---|---|---|---|---|---|\n");
    for r in rows {
        let _ = writeln!(
            s,
            "| {} | {} | {} | {:.2}× | {} | {} |",
            r.axis,
            r.label,
            us(&r.timing),
            r.relative,
            r.decoded_rows,
            r.resampled
        );
    }
    s
}

pub fn audio_table(rows: &[AudioRow]) -> String {
    let mut s = String::from(
        "Audio thread: instructions per `process()` call (valgrind callgrind, the plugin's CLAP `process` inclusive, release build).\n\n",
    );
    s.push_str("| scenario | frames per block | calls measured | instructions per call | per frame |\n|---|---|---|---|---|\n");
    for r in rows {
        let _ = writeln!(
            s,
            "| {} | {} | {} | {:.0} | {:.2} |",
            r.scenario, r.frames, r.calls, r.per_call, r.per_frame
        );
    }
    s
}

pub fn drag_table(rows: &[DragReport]) -> String {
    let mut s = String::from(
        "Slider dragging through the plugin's worker for two seconds, 16 takes per request; \
         keeps up = the final slider value's takes arrive within 100 ms of the last move, nothing queues, latest wins.\n\n",
    );
    s.push_str("| model | prompt bars | move every | moves | take sets during drag | moves coalesced | longest gap | settle after last move | commands queued | latest wins | keeps up |\n|---|---|---|---|---|---|---|---|---|---|---|\n");
    for r in rows {
        let _ = writeln!(
            s,
            "| {} | {} | {:.0} ms | {} | {} | {} | {:.0} ms | {:.0} ms | {} | {} | {} |",
            r.model,
            r.bars,
            r.move_every_ms,
            r.moves,
            r.sets_during_drag,
            r.coalesced,
            r.longest_gap_ms,
            r.settle_ms,
            r.most_commands_waiting,
            if r.latest_wins { "yes" } else { "no" },
            if r.keeps_up { "yes" } else { "no" }
        );
    }
    s
}

/// Where each target stands.
pub fn targets(engine: Option<&EngineReport>, audio: &[AudioRow], drag: &[DragReport]) -> String {
    let row = |name: &str| engine.and_then(|e| e.rows.iter().find(|r| r.name == name));
    let mut s = String::from("| target | where it stands | |\n|---|---|---|\n");
    if let Some(r) = row("decode 16 takes") {
        let o = r.ratio_to_onnxruntime.unwrap_or(f64::NAN);
        let f = r.ratio_to_flop_bound.unwrap_or(f64::NAN);
        let _ = writeln!(
            s,
            "| 16 takes of one bar ≤ {ORT_TARGET}× onnxruntime | {o:.2}× | {} |",
            verdict(o <= ORT_TARGET)
        );
        let _ = writeln!(
            s,
            "| 16 takes of one bar within {FLOP_TARGET}× of the FLOP bound | {f:.2}× | {} |",
            verdict(f <= FLOP_TARGET)
        );
    }
    if let Some(r) = row("model load") {
        let ms = r.nudgebar.best_us / 1e3;
        let _ = writeln!(
            s,
            "| model load ≤ {LOAD_TARGET_MS} ms | {ms:.1} ms (median {:.1} ms) | {} |",
            r.nudgebar.median_us / 1e3,
            verdict(ms <= LOAD_TARGET_MS)
        );
    }
    if let Some(r) = audio
        .iter()
        .find(|r| r.scenario == "idle" && r.frames == 512)
    {
        let _ = writeln!(s, "| `process()` ≤ {IDLE_512_TARGET:.0} instructions per idle 512-frame block | {:.0} | {} |", r.per_call, verdict(r.per_call <= IDLE_512_TARGET));
    }
    for d in drag {
        let _ = writeln!(s, "| slider dragging keeps up ({}, {} bar(s), a move every {:.0} ms) | settles {:.0} ms after the last move, {} commands queued, latest wins: {} | {} |", d.model, d.bars, d.move_every_ms, d.settle_ms, d.most_commands_waiting, d.latest_wins, verdict(d.keeps_up));
    }
    s
}
