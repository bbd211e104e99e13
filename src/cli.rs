//! The command line. The only module that knows about clap; it reads the spec, calls the
//! library, and decides where bytes and messages go.

use crate::error::{Error, SpecSource};
use crate::export::cards::{self, Paper, Per};
use crate::export::{self, Format};
use clap::{Parser, Subcommand, ValueEnum};
use std::io::IsTerminal;
use std::path::{Path, PathBuf};

/// Exit code: success, nothing flagged.
pub const EXIT_OK: i32 = 0;
/// Exit code: the plan was computed, but something is flagged for a look.
pub const EXIT_FLAGGED: i32 = 1;
/// Exit code: bad input, or no recipe exists.
pub const EXIT_ERROR: i32 = 2;

#[derive(Parser, Debug)]
#[command(
    name = "clockprep",
    version,
    about = "Plan clock-reaction kinetics labs from one TOML spec: deliverable stock volumes, mixing sheets, clock-time forecasts, stock recipes and bench cards",
    after_help = "Exit codes: 0 all well, 1 computed but flagged, 2 bad input or no recipe."
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Subcommand, Debug)]
pub enum Command {
    /// Solve every run for deliverable volumes and print the mixing sheet.
    Plan {
        /// The plan spec (TOML).
        spec: PathBuf,
        #[command(flatten)]
        out: OutputArgs,
    },
    /// Print the stock preparation sheet: what to make, in which flask, how to weigh it up.
    Stocks {
        /// The plan spec (TOML).
        spec: PathBuf,
        #[command(flatten)]
        out: OutputArgs,
    },
    /// Print bench cards (HTML sized for A4 or Letter; PDF through headless Chromium).
    Cards {
        /// The plan spec (TOML).
        spec: PathBuf,
        /// One card per station (all its runs) or one per run.
        #[arg(long, value_enum, default_value_t = PerArg::Station)]
        per: PerArg,
        /// Paper size.
        #[arg(long, value_enum, default_value_t = PaperArg::A4)]
        paper: PaperArg,
        /// Write the HTML here (default: stdout, unless --pdf is given).
        #[arg(short, long)]
        output: Option<PathBuf>,
        /// Also print the cards to this PDF (needs Chromium).
        #[arg(long)]
        pdf: Option<PathBuf>,
        /// Replace output files that exist.
        #[arg(long)]
        force: bool,
    },
    /// Write the forecast chart (SVG): predicted times with their temperature band and the
    /// timing window.
    Chart {
        /// The spec (TOML).
        spec: PathBuf,
        /// Write to this file instead of stdout (atomically; never over the spec).
        #[arg(short, long)]
        output: Option<PathBuf>,
        /// Replace the output file if it exists.
        #[arg(long)]
        force: bool,
    },
    /// Fit the prior rate law to measured times (pilot or class); writes the updated prior as
    /// a TOML fragment (never edits the spec).
    Fit {
        /// The spec (TOML) with the prior in `[reaction]` and the timed runs.
        spec: PathBuf,
        /// CSV with a header and columns run, time and optionally temperature.
        times: PathBuf,
        /// Hold orders fixed: "1,1,2" in the rate law's order, or "I-=1,H+=2".
        #[arg(long)]
        orders: Option<String>,
        /// Write to this file instead of stdout (atomically; never over the spec).
        #[arg(short, long)]
        output: Option<PathBuf>,
        /// Replace the output file if it exists.
        #[arg(long)]
        force: bool,
    },
    /// Write the runs of a design scheme (`[design]` in the spec) as TOML, with the standard
    /// error each order and ln k can be expected to have.
    Design {
        /// The spec (TOML) with `[plan]`, `[timing]`, `[design]` and optionally `[reaction]` and stocks.
        spec: PathBuf,
        /// Write to this file instead of stdout (atomically; never over the spec).
        #[arg(short, long)]
        output: Option<PathBuf>,
        /// Replace the output file if it exists.
        #[arg(long)]
        force: bool,
    },
    /// Find the one timing-reagent concentration that times every run best.
    Tune {
        /// The spec (TOML) with `[reaction]` and runs.
        spec: PathBuf,
    },
    /// Forecast the time to colour of every run from its target concentrations and the prior
    /// rate law in `[reaction]` (no stocks or glassware needed).
    Forecast {
        /// The spec (TOML) with `[plan]`, `[timing]`, `[reaction]` and runs.
        spec: PathBuf,
        #[command(flatten)]
        out: OutputArgs,
    },
    /// Print a shell completion script (e.g. clockprep completions bash > ~/.local/share/bash-completion/completions/clockprep).
    Completions {
        #[arg(value_enum)]
        shell: clap_complete::Shell,
    },
}

#[derive(clap::Args, Debug)]
pub struct OutputArgs {
    /// Output format.
    #[arg(short, long, value_enum, default_value_t = FormatArg::Text)]
    pub format: FormatArg,
    /// Write to this file instead of stdout (atomically; never over the spec).
    #[arg(short, long)]
    pub output: Option<PathBuf>,
    /// Replace the output file if it exists.
    #[arg(long)]
    pub force: bool,
}

#[derive(ValueEnum, Clone, Copy, Debug)]
pub enum PerArg {
    Station,
    Run,
}

#[derive(ValueEnum, Clone, Copy, Debug)]
pub enum PaperArg {
    A4,
    Letter,
}

#[derive(ValueEnum, Clone, Copy, Debug)]
pub enum FormatArg {
    Text,
    Csv,
    Json,
    Md,
    Html,
}

impl From<FormatArg> for Format {
    fn from(f: FormatArg) -> Format {
        match f {
            FormatArg::Text => Format::Text,
            FormatArg::Csv => Format::Csv,
            FormatArg::Json => Format::Json,
            FormatArg::Md => Format::Markdown,
            FormatArg::Html => Format::Html,
        }
    }
}

fn read_spec(path: &Path) -> Result<SpecSource, Error> {
    read_named(path, "spec")
}

fn read_named(path: &Path, what: &'static str) -> Result<SpecSource, Error> {
    let text = crate::output::read_input(path, what)?;
    Ok(SpecSource::new(path.display().to_string(), text))
}

fn emit(bytes: &[u8], output: Option<&Path>, force: bool, inputs: &[&Path]) -> Result<(), Error> {
    match output {
        Some(path) => crate::output::write_file(path, bytes, force, inputs),
        None => crate::output::write_stdout(bytes),
    }
}

/// Run one command; returns the exit code.
pub fn run(cli: Cli) -> Result<i32, Error> {
    match cli.command {
        Command::Plan { spec, out } => {
            let report = crate::plan(read_spec(&spec)?)?;
            let bytes = export::export(&report, out.format.into());
            emit(&bytes, out.output.as_deref(), out.force, &[&spec])?;
            Ok(if report.flagged {
                EXIT_FLAGGED
            } else {
                EXIT_OK
            })
        }
        Command::Stocks { spec, out } => {
            let sheet = crate::stocks(read_spec(&spec)?)?;
            let bytes = export::export_stocks(&sheet, out.format.into());
            emit(&bytes, out.output.as_deref(), out.force, &[&spec])?;
            Ok(EXIT_OK)
        }
        Command::Cards {
            spec,
            per,
            paper,
            output,
            pdf,
            force,
        } => {
            let report = crate::plan(read_spec(&spec)?)?;
            let per = match per {
                PerArg::Station => Per::Station,
                PerArg::Run => Per::Run,
            };
            let paper = match paper {
                PaperArg::A4 => Paper::A4,
                PaperArg::Letter => Paper::Letter,
            };
            let html = cards::cards(&report, per, paper);
            // Refuse before writing anything if an output would be refused.
            for p in output.iter().chain(pdf.iter()) {
                crate::output::check_not_input(p, &[&spec])?;
                if p.exists() && !force {
                    return Err(Error::OutputExists { path: p.clone() });
                }
            }
            if output.is_some() || pdf.is_none() {
                emit(&html, output.as_deref(), force, &[&spec])?;
            }
            if let Some(pdf_path) = pdf {
                let browser = crate::export::pdf::find_browser().ok_or(Error::NoBrowser)?;
                let bytes = crate::export::pdf::html_to_pdf(&html, &browser)?;
                crate::output::write_file(&pdf_path, &bytes, force, &[&spec])?;
            }
            Ok(if report.flagged {
                EXIT_FLAGGED
            } else {
                EXIT_OK
            })
        }
        Command::Chart {
            spec,
            output,
            force,
        } => {
            let (svg, flagged) = crate::chart(read_spec(&spec)?)?;
            emit(svg.as_bytes(), output.as_deref(), force, &[&spec])?;
            Ok(if flagged { EXIT_FLAGGED } else { EXIT_OK })
        }
        Command::Fit {
            spec,
            times,
            orders,
            output,
            force,
        } => {
            if let Some(o) = &output {
                crate::output::check_not_input(o, &[&spec, &times])?;
            }
            let times_source = read_named(&times, "times file")?;
            let (fragment, flagged) =
                crate::fit(read_spec(&spec)?, times_source, orders.as_deref())?;
            emit(
                fragment.as_bytes(),
                output.as_deref(),
                force,
                &[&spec, &times],
            )?;
            Ok(if flagged { EXIT_FLAGGED } else { EXIT_OK })
        }
        Command::Design {
            spec,
            output,
            force,
        } => {
            let (runs, flagged) = crate::design(read_spec(&spec)?)?;
            emit(runs.as_bytes(), output.as_deref(), force, &[&spec])?;
            Ok(if flagged { EXIT_FLAGGED } else { EXIT_OK })
        }
        Command::Tune { spec } => {
            let (text, fits) = crate::tune(read_spec(&spec)?)?;
            emit(text.as_bytes(), None, false, &[&spec])?;
            Ok(if fits { EXIT_OK } else { EXIT_FLAGGED })
        }
        Command::Completions { shell } => {
            use clap::CommandFactory;
            let mut out = Vec::new();
            clap_complete::generate(shell, &mut Cli::command(), "clockprep", &mut out);
            crate::output::write_stdout(&out)?;
            Ok(EXIT_OK)
        }
        Command::Forecast { spec, out } => {
            let sheet = crate::forecast_only(read_spec(&spec)?)?;
            let bytes = export::export_forecast(&sheet, out.format.into());
            emit(&bytes, out.output.as_deref(), out.force, &[&spec])?;
            Ok(if sheet.flagged { EXIT_FLAGGED } else { EXIT_OK })
        }
    }
}

/// Entry point of the binary: parse arguments, run, report errors with their location.
pub fn main() -> i32 {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let _ = e.print();
            return if e.use_stderr() { EXIT_ERROR } else { EXIT_OK };
        }
    };
    let tty = std::io::stderr().is_terminal();
    let _ = miette::set_hook(Box::new(move |_| {
        Box::new(
            miette::MietteHandlerOpts::new()
                .color(tty)
                .unicode(tty)
                .terminal_links(false)
                .width(100)
                .build(),
        )
    }));
    match run(cli) {
        Ok(code) => code,
        Err(e) => {
            eprintln!("{:?}", miette::Report::new(e));
            EXIT_ERROR
        }
    }
}
