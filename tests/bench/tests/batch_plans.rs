//! The engine's per-batch-size plans (plugin/engine/src/network.rs): every
//! batch size decodes to the same logits as the rows one at a time, and to
//! the known-weights model's closed form — for the sizes that get a plan of
//! their own and for those past the cap, which run on the general plan.
//!
//! The reference is the tiny model's decoder written out by hand
//! (tests/src/tiny_model.rs): at step s the pitch-token logits are
//! z0 − RANK[s] ± 0.01·z1, rest is 0 and hold is −100.

use nudgebar_engine::Engine;
use nudgebar_tests::tiny_model::{self, CLASSES, HOLD, LATENT, RANK, REST, STEPS};

fn codes(rows: usize, salt: usize) -> Vec<f32> {
    (0..rows * LATENT)
        .map(|i| ((i * 7 + salt * 3) % 11) as f32 * 0.37 - 1.5)
        .collect()
}

/// The decoder's logits for one code, worked out by hand.
fn closed_form(z: &[f32]) -> Vec<f32> {
    let mut out = vec![0.0; STEPS * CLASSES];
    for s in 0..STEPS {
        let at = s * CLASSES;
        out[at] = z[0] - RANK[s] as f32 + 0.01 * z[1];
        out[at + 1] = z[0] - RANK[s] as f32 - 0.01 * z[1];
        out[at + HOLD] = -100.0;
        out[at + REST] = 0.0;
    }
    out
}

#[test]
fn every_batch_size_decodes_like_single_rows_and_the_closed_form() {
    let mut engine = Engine::new(tiny_model::package()).expect("the tiny model loads");
    let row = STEPS * CLASSES;
    // 1..=20 rows: more distinct sizes than the engine specialises (8), so
    // the later sizes run on the general plan. Twice, so cached plans are
    // reused with new inputs.
    for pass in 0..2 {
        for rows in 1..=20 {
            let z = codes(rows, rows + pass);
            let batch = engine.decode(&z, rows).expect("decode runs");
            assert_eq!(batch.len(), rows * row);
            for r in 0..rows {
                let code = &z[r * LATENT..(r + 1) * LATENT];
                let alone = engine.decode(code, 1).expect("decode runs");
                let expected = closed_form(code);
                for (i, ((b, a), e)) in batch[r * row..(r + 1) * row]
                    .iter()
                    .zip(&alone)
                    .zip(&expected)
                    .enumerate()
                {
                    assert!(
                        (b - a).abs() <= 1e-5 && (b - e).abs() <= 1e-4,
                        "batch of {rows}, row {r}, logit {i}: batch {b}, alone {a}, by hand {e}"
                    );
                }
            }
        }
    }
}
