//! The page model: every sheet built once as data (sections of headings, paragraphs, tables,
//! flags, lists, cautions and the chart). The text, Markdown and HTML exporters are small
//! backends over it, so a sentence exists in one place: the builder that puts it on the page.

use crate::flag::Flag;
use crate::report::ForecastReport;

/// One printable sheet.
#[derive(Debug, Clone, PartialEq)]
pub struct Page {
    /// The document title, also the heading of the first section.
    pub title: String,
    pub sections: Vec<Section>,
}

/// A run of blocks under an optional heading. Backends separate sections by a blank line.
#[derive(Debug, Clone, PartialEq)]
pub struct Section {
    pub heading: Option<String>,
    pub blocks: Vec<Block>,
}

/// Column alignment of a table.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Align {
    Left,
    Right,
}

/// A table; every header names the quantity and its unit.
#[derive(Debug, Clone, PartialEq)]
pub struct Table {
    pub headers: Vec<String>,
    pub align: Vec<Align>,
    pub rows: Vec<Vec<String>>,
    /// Belongs to the heading above it (indented in plain text).
    pub nested: bool,
}

/// An item of a list, with lines that belong to it (a source under a rate term).
#[derive(Debug, Clone, PartialEq)]
pub struct Item {
    pub text: String,
    pub details: Vec<String>,
}

/// The forecast chart of a sheet.
#[derive(Debug, Clone, PartialEq)]
pub struct Chart {
    pub title: String,
    pub rows: Vec<ChartRow>,
    /// Timing window, s.
    pub window: (f64, f64),
    /// Half-width of the temperature band, K.
    pub band: f64,
}

/// One run on the chart: its name and forecast.
#[derive(Debug, Clone, PartialEq)]
pub struct ChartRow {
    pub name: String,
    pub forecast: ForecastReport,
}

#[derive(Debug, Clone, PartialEq)]
pub enum Block {
    /// A paragraph.
    Para(String),
    /// A line that belongs to the table or heading above it (indented in plain text).
    Detail(String),
    /// A sub-heading inside a section (a vessel of a run).
    Subheading(String),
    /// An instruction set apart from what surrounds it (the pour at t = 0).
    Instruction(String),
    Table(Table),
    /// Flags to look at before class; `nested` as for [`Block::Detail`].
    Flags {
        flags: Vec<Flag>,
        nested: bool,
    },
    /// Warnings that are sentences rather than coded flags.
    Warnings(Vec<String>),
    List(Vec<Item>),
    /// The safety box: goggles, gloves, SDS, waste, local rules.
    Cautions(Vec<String>),
    Chart(Chart),
    /// Text to copy as it stands (a TOML fragment, a command line).
    Verbatim(String),
}

impl Section {
    pub fn new(heading: impl Into<String>) -> Section {
        Section {
            heading: Some(heading.into()),
            blocks: Vec::new(),
        }
    }

    pub fn untitled() -> Section {
        Section {
            heading: None,
            blocks: Vec::new(),
        }
    }

    pub fn para(&mut self, text: impl Into<String>) -> &mut Self {
        self.blocks.push(Block::Para(text.into()));
        self
    }

    pub fn detail(&mut self, text: impl Into<String>) -> &mut Self {
        self.blocks.push(Block::Detail(text.into()));
        self
    }

    pub fn push(&mut self, block: Block) -> &mut Self {
        self.blocks.push(block);
        self
    }
}

impl Table {
    /// A table whose first column is left-aligned and the others right-aligned (numbers).
    pub fn numeric(headers: Vec<String>, rows: Vec<Vec<String>>) -> Table {
        let mut align = vec![Align::Right; headers.len()];
        if let Some(a) = align.first_mut() {
            *a = Align::Left;
        }
        Table {
            headers,
            align,
            rows,
            nested: false,
        }
    }

    pub fn with_align(headers: Vec<String>, align: Vec<Align>, rows: Vec<Vec<String>>) -> Table {
        Table {
            headers,
            align,
            rows,
            nested: false,
        }
    }

    pub fn nested(mut self) -> Table {
        self.nested = true;
        self
    }
}

/// Headers from string literals.
pub fn headers(list: &[&str]) -> Vec<String> {
    list.iter().map(|s| s.to_string()).collect()
}

/// The cautions of a sheet that names no reagent amounts (fit, design, tune): the general
/// lines every sheet carries.
pub fn general_cautions() -> Section {
    let mut s = Section::untitled();
    s.push(Block::Cautions(
        crate::reference::reagents::GENERAL
            .iter()
            .map(|l| l.to_string())
            .collect(),
    ));
    s
}
