//! Typed errors. Every error about the plan points at the spec text that caused it
//! (file:line:col, with the text underlined) and says how to fix it.

use miette::{Diagnostic, NamedSource, SourceSpan};
use std::ops::Range;
use std::path::PathBuf;
use std::sync::Arc;
use thiserror::Error;

/// The text of a spec and the name it is shown under in messages.
#[derive(Debug, Clone)]
pub struct SpecSource {
    pub name: String,
    pub text: Arc<String>,
}

impl SpecSource {
    pub fn new(name: impl Into<String>, text: impl Into<String>) -> Self {
        SpecSource {
            name: name.into(),
            text: Arc::new(text.into()),
        }
    }

    /// An error located at `span` (byte range) in this spec.
    pub fn error(
        &self,
        span: Range<usize>,
        message: impl Into<String>,
        label: impl Into<String>,
        help: impl Into<String>,
    ) -> Error {
        let len = self.text.len();
        let start = span.start.min(len);
        let end = span.end.clamp(start, len);
        let help: String = help.into();
        Error::Spec(Box::new(SpecError {
            message: message.into(),
            src: NamedSource::new(self.name.clone(), self.text.clone()),
            span: (start, end - start).into(),
            label: label.into(),
            help: (!help.is_empty()).then_some(help),
        }))
    }

    /// The span of a table's header such as `[reaction]` in this text (end of text if absent).
    pub fn table(&self, header: &str) -> Range<usize> {
        let n = self.text.trim_end().len();
        self.text
            .match_indices(header)
            .map(|(i, _)| i)
            .find(|&i| i == 0 || self.text.as_bytes()[i - 1] == b'\n')
            .map_or(n..n, |i| i..i + header.len())
    }

    /// 1-based line and column of a byte offset, for plain-text locations.
    pub fn line_col(&self, offset: usize) -> (usize, usize) {
        let upto = &self.text[..offset.min(self.text.len())];
        let line = upto.matches('\n').count() + 1;
        let col = upto.rfind('\n').map_or(upto.len(), |p| upto.len() - p - 1) + 1;
        (line, col)
    }
}

/// An error in a plan spec, located in its text.
#[derive(Debug, Error, Diagnostic)]
#[error("{message}")]
pub struct SpecError {
    pub message: String,
    #[source_code]
    pub src: NamedSource<Arc<String>>,
    #[label("{label}")]
    pub span: SourceSpan,
    pub label: String,
    #[help]
    pub help: Option<String>,
}

#[derive(Debug, Error, Diagnostic)]
pub enum Error {
    #[error("cannot read the {what} {}: {cause}", path.display())]
    #[diagnostic(help(
        "check the path; specs are TOML files such as plans/maple-hollow-bromate.toml, times are CSV files"
    ))]
    ReadInput {
        what: &'static str,
        path: PathBuf,
        cause: std::io::Error,
    },

    #[error("the {what} {} is not UTF-8 text: line {line}, column {column} has a byte that is not", path.display())]
    #[diagnostic(help(
        "save it as UTF-8 (in a spreadsheet: Save As, CSV UTF-8; in an editor: encoding UTF-8)"
    ))]
    NotUtf8 {
        what: &'static str,
        path: PathBuf,
        line: usize,
        column: usize,
    },

    #[error(transparent)]
    #[diagnostic(transparent)]
    Spec(Box<SpecError>),

    #[error("{} already exists; nothing was written", path.display())]
    #[diagnostic(help("pass --force to replace it, or choose another output path"))]
    OutputExists { path: PathBuf },

    #[error("refusing to write the output over an input of this command ({} is {})", path.display(), input.display())]
    #[diagnostic(help(
        "choose another output path with -o; inputs are never overwritten, even with --force"
    ))]
    OutputIsInput { path: PathBuf, input: PathBuf },

    #[error("cannot write {}: {cause}", path.display())]
    #[diagnostic(help("check that the folder exists, is writable and the disk has room"))]
    WriteOutput {
        path: PathBuf,
        cause: std::io::Error,
    },

    #[error("no browser to print the PDF with; the HTML was still written where asked")]
    #[diagnostic(help("install Chromium (Debian/Ubuntu: apt-get install chromium), or set CLOCKPREP_CHROMIUM to the browser's path; or print the HTML from any browser"))]
    NoBrowser,

    #[error("printing the PDF failed: {reason}")]
    #[diagnostic(help(
        "check that headless Chromium runs here; the HTML can also be printed from any browser"
    ))]
    Print { reason: String },

    #[error("{message}")]
    #[diagnostic(help("see clockprep init --help"))]
    Starter { message: String },

    #[error("the spec and the times cannot both be read from standard input")]
    #[diagnostic(help("give one of them as a file path; `-` stands for standard input"))]
    TwoStdin,

    #[error("clockprep serve: {reason}")]
    #[diagnostic(help(
        "choose another port with --port (0 picks a free one), or stop the program that holds it"
    ))]
    Serve { reason: String },

    /// The solver failed in a way the checks before it did not foresee.
    #[error("run '{run}': the solver stopped: {reason}")]
    #[diagnostic(help(
        "this is a clockprep bug if the checks above passed; please report it with the spec"
    ))]
    Solver { run: String, reason: String },
}

impl Error {
    /// The message of a spec error, for tests and one-line summaries.
    pub fn message(&self) -> String {
        match self {
            Error::Spec(e) => e.message.clone(),
            other => other.to_string(),
        }
    }

    /// The help text of a spec error, if any.
    pub fn help_text(&self) -> Option<String> {
        match self {
            Error::Spec(e) => e.help.clone(),
            _ => None,
        }
    }
}

pub type Result<T> = std::result::Result<T, Error>;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn line_and_column() {
        let s = SpecSource::new("x.toml", "a = 1\nbb = 2\n");
        assert_eq!(s.line_col(0), (1, 1));
        assert_eq!(s.line_col(6), (2, 1));
        assert_eq!(s.line_col(11), (2, 6));
    }
}
