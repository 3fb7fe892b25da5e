//! `nudge`: Nudgebar's offline command. `vary` makes takes from a prompt
//! .mid file; `inspect` checks a model package and prints its contract.
//! Errors are one line on stderr and exit code 1, never a backtrace.

mod aim;
mod blend;
mod derive;
mod inspect;
mod model;
mod report;
mod report_cmd;
mod vary;

use clap::{Parser, Subcommand};
use std::path::PathBuf;

#[derive(Parser)]
#[command(
    name = "nudge",
    version,
    about = "Steer a MIDI phrase along musical-attribute sliders with a VAE, offline."
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Make takes from a prompt: one .mid per take plus a table of measured attributes.
    Vary(vary::VaryArgs),
    /// Load a model package, check it against its graphs, print its contract and axes.
    Inspect {
        /// The package folder (manifest.json + ONNX files); the built-in demo model when left out.
        model: Option<PathBuf>,
        /// Print the contract as JSON.
        #[arg(long)]
        json: bool,
    },
    /// Search one axis for a take that measures a target value (e.g. note_density=7).
    Aim(aim::AimArgs),
    /// In-between takes from the prompt toward a kept take (from `vary --json`).
    Blend(blend::BlendArgs),
    /// Derive axes for a plain VAE from a folder of your own .mid files.
    DeriveAxes(derive::DeriveArgs),
    /// Measure how well a model's axes steer and where it decodes badly: JSON + HTML.
    Report(report_cmd::ReportArgs),
}

fn main() {
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Vary(args) => vary::run(args),
        Command::Inspect { model, json } => inspect::run(model.as_deref(), json),
        Command::Aim(args) => aim::run(args),
        Command::Blend(args) => blend::run(args),
        Command::DeriveAxes(args) => derive::run(args),
        Command::Report(args) => report_cmd::run(args),
    };
    if let Err(message) = result {
        eprintln!("nudge: {message}");
        std::process::exit(1);
    }
}
