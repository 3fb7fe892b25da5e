//! A button press on an edge-triggered parameter ("Capture next bars",
//! "Use last bars").
//!
//! The audio thread acts when such a parameter goes from off to on between
//! two of its blocks. A value set from the editor reaches the plugin only
//! at the end of a `process()` call (nice-plug applies the editor's changes
//! with the block's output events), so switching on and straight off again
//! could land in the same block and never be seen. A press therefore holds
//! each value until the audio thread has started a block after the value
//! arrived, using the block counter it publishes. If the parameter is
//! already on (left there by automation), it is switched off first, so the
//! press still makes an edge.

/// What the editor must do to the parameter now.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Step {
    Nothing,
    SetOn,
    SetOff,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
enum Phase {
    #[default]
    Idle,
    /// Waiting for the parameter to read `target`, then for one more block.
    Holding {
        target: bool,
        /// Block count when the value was first seen at `target`.
        seen_at: Option<u64>,
    },
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Press {
    phase: Phase,
}

impl Press {
    /// Starts a press; `value` is the parameter's value now.
    pub fn press(&mut self, value: bool) -> Step {
        let target = !value;
        self.phase = Phase::Holding {
            target,
            seen_at: None,
        };
        if target {
            Step::SetOn
        } else {
            Step::SetOff
        }
    }

    /// Advances the press; call every frame with the parameter's value and
    /// the audio thread's block count.
    pub fn tick(&mut self, value: bool, blocks: u64) -> Step {
        let Phase::Holding { target, seen_at } = self.phase else {
            return Step::Nothing;
        };
        match seen_at {
            None if value == target => {
                self.phase = Phase::Holding {
                    target,
                    seen_at: Some(blocks),
                };
                Step::Nothing
            }
            // A block has begun since the value arrived: the audio thread saw it.
            Some(at) if blocks > at => {
                if target {
                    self.phase = Phase::Idle;
                    Step::SetOff
                } else {
                    // It was on; now make the real edge.
                    self.phase = Phase::Holding {
                        target: true,
                        seen_at: None,
                    };
                    Step::SetOn
                }
            }
            _ => Step::Nothing,
        }
    }

    /// True while a press is under way (the button shows it).
    pub fn pending(&self) -> bool {
        self.phase != Phase::Idle
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Plays the press against a model of nice-plug's timing: a value set
    /// by the editor is applied at the end of the next block, after the
    /// plugin has read its parameters. Returns the values the plugin read,
    /// block by block.
    fn simulate(start_on: bool, frames_per_block: usize) -> (Vec<bool>, bool) {
        let mut press = Press::default();
        let mut param = start_on;
        let mut queued: Vec<bool> = Vec::new();
        let mut blocks = 0u64;
        let mut reads = Vec::new();
        let mut step = press.press(param);
        for frame in 0..200 {
            match step {
                Step::SetOn => queued.push(true),
                Step::SetOff => queued.push(false),
                Step::Nothing => {}
            }
            // The audio thread runs a block every few editor frames.
            if frame % frames_per_block == 0 {
                blocks += 1;
                reads.push(param);
                for v in queued.drain(..) {
                    param = v;
                }
            }
            step = press.tick(param, blocks);
        }
        (reads, press.pending())
    }

    fn rising_edges(reads: &[bool]) -> usize {
        reads.windows(2).filter(|w| !w[0] && w[1]).count()
    }

    #[test]
    fn the_audio_thread_sees_exactly_one_edge_and_the_parameter_ends_off() {
        for frames_per_block in [1, 2, 5] {
            for start_on in [false, true] {
                let (reads, pending) = simulate(start_on, frames_per_block);
                assert_eq!(
                    rising_edges(&reads),
                    1,
                    "start {start_on}, {frames_per_block} frames/block: {reads:?}"
                );
                assert!(!reads.last().unwrap(), "left off afterwards");
                assert!(!pending);
            }
        }
    }

    #[test]
    fn without_blocks_the_press_waits_instead_of_giving_up() {
        let mut press = Press::default();
        assert_eq!(press.press(false), Step::SetOn);
        // The value arrives (a host flush) but no block runs.
        for _ in 0..100 {
            assert_eq!(press.tick(true, 7), Step::Nothing);
        }
        assert!(press.pending());
        assert_eq!(press.tick(true, 8), Step::SetOff);
        assert!(!press.pending());
    }
}
