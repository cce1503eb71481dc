//! `inkling`: train, convert, inspect, evaluate and try byte-level completion models.

use clap::{Parser, Subcommand};
use inkling_host::commands;

/// Predictive text for small devices: the workstation tools.
#[derive(Debug, Parser)]
#[command(name = "inkling", version, about)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Train a model on text files (CPU).
    Train(commands::train::TrainArgs),
    /// Convert a float checkpoint to a packed int8 image.
    Convert(commands::convert::ConvertArgs),
    /// Show an image's dimensions, flash and RAM.
    Inspect(commands::inspect::InspectArgs),
    /// The distribution of the byte after a text.
    Next(commands::next::NextArgs),
    /// Bits per byte of a text file.
    Eval(commands::eval::EvalArgs),
    /// The most likely completions of the word being typed (or the next word).
    Suggest(commands::suggest::SuggestArgs),
    /// The most likely words for a sequence of 12-key presses (ITU-T E.161).
    Keys(commands::keys::KeysArgs),
    /// Host speed of the engine.
    Bench(commands::bench::BenchArgs),
    /// The model shapes that fit a part's flash and RAM, and their speed on a Cortex-M4F.
    Budget(commands::budget::BudgetArgs),
    /// Type in the terminal with the suggestions shown at every key.
    Try(commands::try_screen::TryArgs),
    /// The bundled demo model, end to end.
    Demo(commands::demo::DemoArgs),
}

fn main() {
    // Output piped into a program that stops reading early (`| head`) ends this process
    // quietly, as for any Unix command, instead of a panic on the failed write.
    // SAFETY: called first in main, before any thread exists; it sets one signal disposition.
    #[cfg(unix)]
    unsafe {
        libc::signal(libc::SIGPIPE, libc::SIG_DFL);
    }
    let cli = Cli::parse();
    let result = match &cli.command {
        Command::Train(a) => commands::train::run(a).map_err(Into::into),
        Command::Convert(a) => commands::convert::run(a),
        Command::Inspect(a) => commands::inspect::run(a),
        Command::Next(a) => commands::next::run(a),
        Command::Eval(a) => commands::eval::run(a),
        Command::Demo(a) => commands::demo::run(a),
        Command::Bench(a) => commands::bench::run(a),
        Command::Budget(a) => commands::budget::run(a),
        Command::Suggest(a) => commands::suggest::run(a),
        Command::Keys(a) => commands::keys::run(a),
        Command::Try(a) => commands::try_screen::run(a),
    };
    if let Err(e) = result {
        eprintln!("inkling: {e}");
        std::process::exit(1);
    }
}
