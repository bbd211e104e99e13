//! The command line. The only module that knows about clap; it reads the spec, calls the
//! library, and decides where bytes and messages go.

use crate::error::{Error, SpecSource};
use crate::export::cards::{self, Paper, Per};
use crate::export::{self, Format, SummaryFormat};
use crate::output::Target;
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
        /// Output format.
        #[arg(short, long, value_enum, default_value_t = FormatArg::Text)]
        format: FormatArg,
        #[command(flatten)]
        write: WriteArgs,
    },
    /// Print the stock preparation sheet: what to make, in which flask, how to weigh it up.
    Stocks {
        /// The plan spec (TOML).
        spec: PathBuf,
        /// Output format.
        #[arg(short, long, value_enum, default_value_t = FormatArg::Text)]
        format: FormatArg,
        /// Also print the sheet (as its HTML, schedule and checklist included) to this PDF
        /// (needs Chromium); the --format output then goes only to --output.
        #[arg(long)]
        pdf: Option<PathBuf>,
        #[command(flatten)]
        write: WriteArgs,
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
        /// Also print the cards to this PDF (needs Chromium); the HTML then goes only to
        /// --output.
        #[arg(long)]
        pdf: Option<PathBuf>,
        /// Print the whole set of cards this many times (1 to 50).
        #[arg(long, default_value_t = 1, value_parser = clap::value_parser!(u32).range(1..=50))]
        copies: u32,
        #[command(flatten)]
        write: WriteArgs,
    },
    /// Print bottle labels for the stocks (HTML on an A4 3 x 8 or Letter 2 x 5 label sheet;
    /// PDF through headless Chromium).
    Labels {
        /// The plan spec (TOML).
        spec: PathBuf,
        /// Paper size (and label grid).
        #[arg(long, value_enum, default_value_t = PaperArg::A4)]
        paper: PaperArg,
        /// Also print the labels to this PDF (needs Chromium).
        #[arg(long)]
        pdf: Option<PathBuf>,
        #[command(flatten)]
        write: WriteArgs,
    },
    /// Write the forecast chart (SVG): predicted times with their temperature band and the
    /// timing window.
    Chart {
        /// The spec (TOML).
        spec: PathBuf,
        #[command(flatten)]
        write: WriteArgs,
    },
    /// Fit the prior rate law to measured times (pilot or class); writes the updated prior
    /// (by default as a TOML fragment; never edits the spec).
    Fit {
        /// The spec (TOML) with the prior in `[reaction]` and the timed runs.
        spec: PathBuf,
        /// CSV with a header and columns run, time and optionally temperature.
        times: PathBuf,
        /// Hold orders fixed: "1,1,2" in the rate law's order, or "I-=1,H+=2".
        #[arg(long)]
        orders: Option<String>,
        /// Output format: the TOML fragment to paste over [reaction], or the fit as a sheet.
        #[arg(short, long, value_enum, default_value_t = SummaryArg::Toml)]
        format: SummaryArg,
        #[command(flatten)]
        write: WriteArgs,
    },
    /// Write the runs of a design scheme (`[design]` in the spec), with the standard error
    /// each order and ln k can be expected to have (by default as `[[run]]` TOML).
    Design {
        /// The spec (TOML) with `[plan]`, `[timing]`, `[design]` and optionally `[reaction]` and stocks.
        spec: PathBuf,
        /// Output format: `[[run]]` TOML to paste into a spec, or the design as a sheet.
        #[arg(short, long, value_enum, default_value_t = SummaryArg::Toml)]
        format: SummaryArg,
        #[command(flatten)]
        write: WriteArgs,
    },
    /// Find the one timing-reagent concentration that times every run best.
    Tune {
        /// The spec (TOML) with `[reaction]` and runs.
        spec: PathBuf,
        /// Output format (toml: the [timing] line to paste, when a concentration fits).
        #[arg(short, long, value_enum, default_value_t = SummaryArg::Text)]
        format: SummaryArg,
        #[command(flatten)]
        write: WriteArgs,
    },
    /// Forecast the time to colour of every run from its target concentrations and the prior
    /// rate law in `[reaction]` (no stocks or glassware needed).
    Forecast {
        /// The spec (TOML) with `[plan]`, `[timing]`, `[reaction]` and runs.
        spec: PathBuf,
        /// Output format.
        #[arg(short, long, value_enum, default_value_t = FormatArg::Text)]
        format: FormatArg,
        #[command(flatten)]
        write: WriteArgs,
    },
    /// Edit a spec in a local web page and see every sheet as you type; print and download
    /// from there. Listens on 127.0.0.1 only, unless --listen is given.
    Serve {
        /// The spec to edit (Save writes back to it, keeping the previous version as SPEC~);
        /// without one the page starts from the bromate starter.
        spec: Option<PathBuf>,
        /// The port (0 picks a free one).
        #[arg(long, default_value_t = crate::serve::DEFAULT_PORT)]
        port: u16,
        /// Listen on this address instead of 127.0.0.1 (e.g. 0.0.0.0 to reach the page from a
        /// tablet on the same network); the page has no login, so a warning is printed.
        #[arg(long)]
        listen: Option<std::net::IpAddr>,
    },
    /// Write a commented starter spec for a reaction preset that solves as written.
    Init {
        /// The reaction preset.
        #[arg(long, default_value = "bromate-iodide", value_parser = ["bromate-iodide", "persulfate-iodide", "peroxide-iodide"])]
        preset: String,
        /// Volume of every run, mL (whole, 10 to 100).
        #[arg(long, default_value_t = 50)]
        volume: u32,
        /// Number of runs: the base, each rate-law species doubled, then each ×1.5.
        #[arg(long, default_value_t = 4)]
        runs: u32,
        /// Bench groups working from the sheets.
        #[arg(long, default_value_t = 4)]
        stations: u32,
        /// The sheets' title.
        #[arg(long, default_value = "New clock-reaction lab (edit this title)")]
        title: String,
        #[command(flatten)]
        write: WriteArgs,
    },
    /// Print the JSON Schema of the spec, for editors that validate and complete TOML.
    Schema {
        #[command(flatten)]
        write: WriteArgs,
    },
    /// Print a shell completion script (e.g. clockprep completions bash > ~/.local/share/bash-completion/completions/clockprep).
    Completions {
        #[arg(value_enum)]
        shell: clap_complete::Shell,
    },
}

/// Where the output goes; the same two options on every command that writes.
#[derive(clap::Args, Debug)]
pub struct WriteArgs {
    /// Write to this file instead of stdout (atomically; never over an input).
    #[arg(short, long)]
    pub output: Option<PathBuf>,
    /// Replace the output file if it exists.
    #[arg(long)]
    pub force: bool,
}

impl WriteArgs {
    fn target(&self) -> Target {
        Target {
            path: self.output.clone(),
            force: self.force,
        }
    }
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

impl From<PaperArg> for Paper {
    fn from(p: PaperArg) -> Paper {
        match p {
            PaperArg::A4 => Paper::A4,
            PaperArg::Letter => Paper::Letter,
        }
    }
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

/// The formats of `fit`, `design` and `tune`.
#[derive(ValueEnum, Clone, Copy, Debug)]
pub enum SummaryArg {
    Text,
    Json,
    Md,
    Html,
    Toml,
}

impl From<SummaryArg> for SummaryFormat {
    fn from(f: SummaryArg) -> SummaryFormat {
        match f {
            SummaryArg::Text => SummaryFormat::Text,
            SummaryArg::Json => SummaryFormat::Json,
            SummaryArg::Md => SummaryFormat::Markdown,
            SummaryArg::Html => SummaryFormat::Html,
            SummaryArg::Toml => SummaryFormat::Toml,
        }
    }
}

/// Guard the output, build the bytes, write them: the one path of every command that writes.
/// `build` returns the bytes and whether anything is flagged.
fn guarded(
    write: &WriteArgs,
    inputs: &[&Path],
    build: impl FnOnce() -> Result<(Vec<u8>, bool), Error>,
) -> Result<i32, Error> {
    let target = write.target();
    target.guard(inputs)?;
    let (bytes, flagged) = build()?;
    target.write(&bytes, inputs)?;
    Ok(exit(flagged))
}

/// A printable HTML document: to stdout or `-o`, and with `--pdf` also through headless
/// Chromium (the HTML then goes only to `-o`). Both outputs are guarded before any work.
fn printed(
    write: &WriteArgs,
    pdf: Option<PathBuf>,
    spec: &Path,
    build: impl FnOnce() -> Result<(Vec<u8>, bool), Error>,
) -> Result<i32, Error> {
    printed_as(write, pdf, spec, || {
        build().map(|(html, flagged)| (html.clone(), html, flagged))
    })
}

/// As [`printed`], for a document whose `--output` bytes (first) differ from the HTML that is
/// printed (second).
fn printed_as(
    write: &WriteArgs,
    pdf: Option<PathBuf>,
    spec: &Path,
    build: impl FnOnce() -> Result<(Vec<u8>, Vec<u8>, bool), Error>,
) -> Result<i32, Error> {
    let target = write.target();
    let pdf_target = Target {
        path: pdf,
        force: write.force,
    };
    target.guard(&[spec])?;
    pdf_target.guard(&[spec])?;
    let (out, html, flagged) = build()?;
    if target.path.is_some() || pdf_target.path.is_none() {
        target.write(&out, &[spec])?;
    }
    if pdf_target.path.is_some() {
        let browser = crate::export::pdf::find_browser().ok_or(Error::NoBrowser)?;
        let bytes = crate::export::pdf::html_to_pdf(&html, &browser)?;
        pdf_target.write(&bytes, &[spec])?;
    }
    Ok(exit(flagged))
}

fn exit(flagged: bool) -> i32 {
    if flagged {
        EXIT_FLAGGED
    } else {
        EXIT_OK
    }
}

fn read_spec(path: &Path) -> Result<SpecSource, Error> {
    read_named(path, "spec")
}

fn read_named(path: &Path, what: &'static str) -> Result<SpecSource, Error> {
    let text = crate::output::read_input(path, what)?;
    let name = if crate::output::is_stdin(path) {
        "<stdin>".to_string()
    } else {
        path.display().to_string()
    };
    Ok(SpecSource::new(name, text))
}

/// Run one command; returns the exit code. Every output is guarded (not an input, not an
/// existing file unless forced) before any work, and written through one path.
pub fn run(cli: Cli) -> Result<i32, Error> {
    match cli.command {
        Command::Plan {
            spec,
            format,
            write,
        } => guarded(&write, &[&spec], || {
            let report = crate::plan(read_spec(&spec)?)?;
            Ok((export::export(&report, format.into()), report.flagged))
        }),
        Command::Stocks {
            spec,
            format,
            pdf,
            write,
        } => match pdf {
            None => guarded(&write, &[&spec], || {
                let sheet = crate::stocks(read_spec(&spec)?)?;
                Ok((export::export_stocks(&sheet, format.into()), false))
            }),
            Some(pdf) => printed_as(&write, Some(pdf), &spec, || {
                let sheet = crate::stocks(read_spec(&spec)?)?;
                Ok((
                    export::export_stocks(&sheet, format.into()),
                    export::export_stocks(&sheet, Format::Html),
                    false,
                ))
            }),
        },
        Command::Cards {
            spec,
            per,
            paper,
            pdf,
            copies,
            write,
        } => printed(&write, pdf, &spec, || {
            let report = crate::plan(read_spec(&spec)?)?;
            let per = match per {
                PerArg::Station => Per::Station,
                PerArg::Run => Per::Run,
            };
            let html = cards::cards_copies(&report, per, paper.into(), copies as usize);
            Ok((html, report.flagged))
        }),
        Command::Labels {
            spec,
            paper,
            pdf,
            write,
        } => printed(&write, pdf, &spec, || {
            let sheet = crate::stocks(read_spec(&spec)?)?;
            Ok((crate::export::labels::labels(&sheet, paper.into()), false))
        }),
        Command::Chart { spec, write } => guarded(&write, &[&spec], || {
            let (svg, flagged) = crate::chart(read_spec(&spec)?)?;
            Ok((svg.into_bytes(), flagged))
        }),
        Command::Fit {
            spec,
            times,
            orders,
            format,
            write,
        } => guarded(&write, &[&spec, &times], || {
            if crate::output::is_stdin(&spec) && crate::output::is_stdin(&times) {
                return Err(Error::TwoStdin);
            }
            let times_source = read_named(&times, "times file")?;
            let sheet = crate::fit(read_spec(&spec)?, times_source, orders.as_deref())?;
            Ok((export::export_fit(&sheet, format.into()), sheet.flagged()))
        }),
        Command::Design {
            spec,
            format,
            write,
        } => guarded(&write, &[&spec], || {
            let sheet = crate::design(read_spec(&spec)?)?;
            Ok((export::export_design(&sheet, format.into()), sheet.flagged))
        }),
        Command::Tune {
            spec,
            format,
            write,
        } => guarded(&write, &[&spec], || {
            let sheet = crate::tune(read_spec(&spec)?)?;
            Ok((export::export_tune(&sheet, format.into()), !sheet.fits))
        }),
        Command::Init {
            preset,
            volume,
            runs,
            stations,
            title,
            write,
        } => guarded(&write, &[], || {
            let options = crate::spec::starter::StarterOptions {
                preset,
                volume_ml: volume,
                runs,
                stations,
                title,
            };
            let text = crate::spec::starter::starter(&options)
                .map_err(|message| Error::Starter { message })?;
            Ok((text.into_bytes(), false))
        }),
        Command::Serve { spec, port, listen } => crate::serve::serve(crate::serve::Options {
            spec,
            port,
            listen: listen.unwrap_or(std::net::IpAddr::V4(std::net::Ipv4Addr::LOCALHOST)),
        }),
        Command::Schema { write } => guarded(&write, &[], || {
            Ok((crate::spec::schema().into_bytes(), false))
        }),
        Command::Completions { shell } => {
            use clap::CommandFactory;
            let mut out = Vec::new();
            clap_complete::generate(shell, &mut Cli::command(), "clockprep", &mut out);
            crate::output::write_stdout(&out)?;
            Ok(EXIT_OK)
        }
        Command::Forecast {
            spec,
            format,
            write,
        } => guarded(&write, &[&spec], || {
            let sheet = crate::forecast_only(read_spec(&spec)?)?;
            Ok((
                export::export_forecast(&sheet, format.into()),
                sheet.flagged,
            ))
        }),
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
