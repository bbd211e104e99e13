//! Bench cards checked in a real browser: printed to PDF by headless Chromium on A4 and Letter,
//! then read back with poppler (pdfinfo, pdftotext). Run with the libtest-mimic harness so that
//! without Chromium or poppler the tests show as ignored (not as passed), unless
//! CLOCKPREP_REQUIRE_BROWSER is set (CI sets it), which turns a missing tool into a failure.

use assert_cmd::Command;
use std::path::{Path, PathBuf};
use std::process;

const DEMO: &str = "plans/maple-hollow-bromate.toml";

fn tools() -> Option<PathBuf> {
    let browser = clockprep::export::pdf::find_browser();
    let poppler = process::Command::new("pdfinfo").arg("-v").output().is_ok();
    match (browser, poppler) {
        (Some(b), true) => Some(b),
        _ => None,
    }
}

fn browser() -> PathBuf {
    tools().expect("chromium and poppler-utils are installed")
}

fn main() {
    let args = libtest_mimic::Arguments::from_args();
    let missing = tools().is_none();
    let required = std::env::var_os("CLOCKPREP_REQUIRE_BROWSER").is_some();
    if missing && required {
        eprintln!("CLOCKPREP_REQUIRE_BROWSER is set but chromium or poppler-utils is missing");
        process::exit(101);
    }
    let tests: Vec<(&str, fn())> = vec![
        (
            "cards_print_on_both_papers_without_splitting_or_overflowing",
            cards_print_on_both_papers_without_splitting_or_overflowing,
        ),
        ("names_print_as_text", names_print_as_text),
        (
            "labels_of_a_week_fit_their_grid_on_both_papers",
            labels_of_a_week_fit_their_grid_on_both_papers,
        ),
        (
            "station_cards_of_a_week_follow_each_section",
            station_cards_of_a_week_follow_each_section,
        ),
        (
            "the_stocks_sheet_prints_with_its_schedule_and_checklist",
            the_stocks_sheet_prints_with_its_schedule_and_checklist,
        ),
    ];
    let trials = tests
        .into_iter()
        .map(|(name, f)| {
            libtest_mimic::Trial::test(name, move || {
                std::panic::catch_unwind(f).map_err(|e| {
                    e.downcast_ref::<String>()
                        .cloned()
                        .or_else(|| e.downcast_ref::<&str>().map(|s| s.to_string()))
                        .unwrap_or_else(|| "panicked".into())
                        .into()
                })
            })
            .with_ignored_flag(missing)
        })
        .collect();
    libtest_mimic::run(&args, trials).exit();
}

fn pdf_pages(pdf: &Path) -> usize {
    let out = process::Command::new("pdfinfo").arg(pdf).output().unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    text.lines()
        .find_map(|l| l.strip_prefix("Pages:"))
        .and_then(|n| n.trim().parse().ok())
        .expect("pdfinfo reports the page count")
}

/// The height (pt) of every word's box in the PDF, from `pdftotext -bbox`: about 1.16 times
/// the font size for DejaVu Sans (10.48 pt for 9 pt text, 12.80 pt for 11 pt, measured here).
fn word_heights(pdf: &Path) -> Vec<f64> {
    let out = process::Command::new("pdftotext")
        .arg("-bbox")
        .arg(pdf)
        .arg("-")
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    let attr = |line: &str, key: &str| -> Option<f64> {
        let at = line.find(&format!("{key}=\""))? + key.len() + 2;
        line[at..].split('"').next()?.parse().ok()
    };
    text.lines()
        .filter(|l| l.trim_start().starts_with("<word"))
        .filter_map(|l| Some(attr(l, "yMax")? - attr(l, "yMin")?))
        .collect()
}

/// Bench cards are read at arm's length: no text under 9 pt (cautions, footer) and the body at
/// 11 pt or more (half the words at least that size), with a 5 % margin on the box ratio.
fn assert_readable(pdf: &Path, what: &str) {
    let mut h = word_heights(pdf);
    assert!(!h.is_empty(), "{what}: no text in the PDF");
    h.sort_by(f64::total_cmp);
    let ratio = 1.164 * 0.95;
    assert!(
        h[0] >= 9.0 * ratio,
        "{what}: text of about {:.1} pt",
        h[0] / 1.164
    );
    let median = h[h.len() / 2];
    assert!(
        median >= 11.0 * ratio,
        "{what}: body text of about {:.1} pt",
        median / 1.164
    );
}

fn page_text(pdf: &Path, page: usize) -> String {
    let out = process::Command::new("pdftotext")
        .args(["-f", &page.to_string(), "-l", &page.to_string(), "-layout"])
        .arg(pdf)
        .arg("-")
        .output()
        .unwrap();
    String::from_utf8_lossy(&out.stdout).into_owned()
}

/// Load the HTML in the browser with a script that compares every card's content height with
/// its box, and read the verdict back from the dumped DOM.
fn overflowing_cards(html: &Path, browser: &Path) -> String {
    overflowing(html, browser, "card", "cards")
}

/// As [`overflowing_cards`], for the boxes of any class (`label` for bottle labels).
fn overflowing(html: &Path, browser: &Path, class: &str, tag: &str) -> String {
    let text = std::fs::read_to_string(html).unwrap();
    let probe = r#"<script>
var bad = [];
document.querySelectorAll('.CLASS').forEach(function (c, i) {
  if (c.scrollHeight > c.clientHeight + 1 || c.scrollWidth > c.clientWidth + 1) bad.push(i + 1);
});
var n = document.createElement('div'); n.id = 'verdict';
n.textContent = 'TAG=' + document.querySelectorAll('.CLASS').length + ' overflow=' + bad.join(',');
document.body.appendChild(n);
</script></body>"#
        .replace("CLASS", class)
        .replace("TAG", tag);
    let dir = tempfile::tempdir().unwrap();
    let probed = dir.path().join("probe.html");
    std::fs::write(&probed, text.replace("</body>", &probe)).unwrap();
    let out = process::Command::new(browser)
        .args(clockprep::export::pdf::HEADLESS)
        .arg(format!(
            "--user-data-dir={}",
            dir.path().join("profile").display()
        ))
        .arg("--dump-dom")
        .arg(&probed)
        .output()
        .unwrap();
    let dom = String::from_utf8_lossy(&out.stdout);
    let marker = "<div id=\"verdict\">";
    let at = dom.find(marker).expect("the probe ran") + marker.len();
    dom[at..].split('<').next().unwrap().to_string()
}

fn print(spec: &Path, per: &str, paper: &str, dir: &Path) -> (PathBuf, PathBuf) {
    let html = dir.join(format!("cards-{per}-{paper}.html"));
    let pdf = dir.join(format!("cards-{per}-{paper}.pdf"));
    Command::cargo_bin("clockprep")
        .unwrap()
        .arg("cards")
        .arg(spec)
        .args(["--per", per, "--paper", paper, "-o"])
        .arg(&html)
        .arg("--pdf")
        .arg(&pdf)
        .assert()
        .code(0);
    (html, pdf)
}

fn cards_print_on_both_papers_without_splitting_or_overflowing() {
    let browser = browser();
    let dir = tempfile::tempdir().unwrap();
    let report = clockprep::plan(clockprep::error::SpecSource::new(
        DEMO,
        std::fs::read_to_string(DEMO).unwrap(),
    ))
    .unwrap();
    for paper in ["a4", "letter"] {
        for (per, layout) in [
            ("run", clockprep::export::cards::Per::Run),
            ("station", clockprep::export::cards::Per::Station),
        ] {
            let (html, pdf) = print(Path::new(DEMO), per, paper, dir.path());
            let what = format!("{per} cards on {paper}");
            assert_readable(&pdf, &what);
            // The page count is what the layout predicts (5 runs: 3 pages of two run cards;
            // 8 stations: 8 one-page station cards).
            let expected = clockprep::export::cards::pages(&report, layout);
            assert_eq!(pdf_pages(&pdf), expected, "{what}");
            let info = String::from_utf8_lossy(
                &process::Command::new("pdfinfo")
                    .arg(&pdf)
                    .output()
                    .unwrap()
                    .stdout,
            )
            .into_owned();
            assert!(
                info.contains(if paper == "a4" { "(A4)" } else { "(letter)" }),
                "{what}: {info}"
            );
            // No card is cut by a page break: its first and last lines are on the same page.
            // Each set of cards opens with a station set-up card.
            let cards = if per == "run" {
                report.runs.len() + 1
            } else {
                report.stations as usize
                    * (1 + report
                        .runs
                        .len()
                        .div_ceil(clockprep::export::cards::RUNS_PER_STATION_CARD))
            };
            let mut found = 0;
            for page in 1..=expected {
                let text = page_text(&pdf, page);
                for k in 1..=cards {
                    let head = text.contains(&format!("card {k} of {cards}"));
                    // Whole words: "end of card 1" is also the start of "end of card 10".
                    let end = text
                        .split(|c: char| !c.is_ascii_alphanumeric() && c != ' ')
                        .any(|w| w.trim() == format!("end of card {k}"));
                    assert_eq!(head, end, "{what}: card {k} split across page {page}");
                    if head {
                        found += 1;
                    }
                }
                assert!(
                    text.contains("safety officer"),
                    "{what}: page {page} has no cautions"
                );
            }
            assert_eq!(found, cards, "{what}: every card is printed once");
            // No card's content overflows its box.
            let verdict = overflowing_cards(&html, &browser);
            assert_eq!(verdict, format!("cards={cards} overflow="), "{what}");
        }
    }
}

fn names_print_as_text() {
    let dir = tempfile::tempdir().unwrap();
    let spec = dir.path().join("escape.toml");
    let text = std::fs::read_to_string(DEMO).unwrap().replace(
        "name = \"reference\"",
        "name = \"<script>alert(1)</script>\"",
    );
    std::fs::write(&spec, text).unwrap();
    let (html, pdf) = print(&spec, "run", "a4", dir.path());
    let html = std::fs::read_to_string(html).unwrap();
    assert!(html.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
    assert!(!html.contains("<script>alert"));
    // The run's name prints as text on its card (after the set-up card).
    assert!((1..=pdf_pages(&pdf)).any(|p| page_text(&pdf, p).contains("<script>alert(1)</script>")));
}

/// The bottle labels of the two-section demo (a label per flask of every batch, with the
/// planned day and use-by date) on both label-sheet grids: every label's text fits its box
/// (`overflow: hidden` would otherwise hide it), the PDF has the grid's page count and every
/// label's caution line.
fn labels_of_a_week_fit_their_grid_on_both_papers() {
    let browser = browser();
    let dir = tempfile::tempdir().unwrap();
    let spec = "plans/birchfield-two-sections.toml";
    let sheet = clockprep::stocks(clockprep::error::SpecSource::new(
        spec,
        std::fs::read_to_string(spec).unwrap(),
    ))
    .unwrap();
    let labels: u32 = sheet.stocks.iter().map(|s| s.flask_count.max(1)).sum();
    for (paper, per_page) in [("a4", 24), ("letter", 10)] {
        let html = dir.path().join(format!("labels-{paper}.html"));
        let pdf = dir.path().join(format!("labels-{paper}.pdf"));
        Command::cargo_bin("clockprep")
            .unwrap()
            .arg("labels")
            .arg(spec)
            .args(["--paper", paper, "-o"])
            .arg(&html)
            .arg("--pdf")
            .arg(&pdf)
            .assert()
            .code(0);
        let what = format!("labels on {paper}");
        assert_eq!(
            overflowing(&html, &browser, "label", "labels"),
            format!("labels={labels} overflow="),
            "{what}"
        );
        assert_eq!(
            pdf_pages(&pdf),
            (labels as usize).div_ceil(per_page),
            "{what}"
        );
        let text: String = (1..=pdf_pages(&pdf)).map(|p| page_text(&pdf, p)).collect();
        assert_eq!(
            text.matches("local rules apply").count(),
            labels as usize,
            "{what}: every label carries the cautions"
        );
    }
}

/// `clockprep stocks --pdf` prints the whole sheet: the make-up schedule, the checklist with a
/// tick box per batch, the fetch lists, the waste by section and the cautions; the `-f json`
/// output still goes to `-o`.
fn the_stocks_sheet_prints_with_its_schedule_and_checklist() {
    let dir = tempfile::tempdir().unwrap();
    let spec = "plans/birchfield-two-sections.toml";
    let pdf = dir.path().join("stocks.pdf");
    let json = dir.path().join("stocks.json");
    Command::cargo_bin("clockprep")
        .unwrap()
        .arg("stocks")
        .arg(spec)
        .args(["-f", "json", "-o"])
        .arg(&json)
        .arg("--pdf")
        .arg(&pdf)
        .assert()
        .code(0);
    let sheet: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    let text: String = (1..=pdf_pages(&pdf)).map(|p| page_text(&pdf, p)).collect();
    for heading in [
        "Make-up schedule",
        "Make-up checklist",
        "Fetch from the store: the week",
        "Waste: the week",
        "safety officer",
    ] {
        assert!(text.contains(heading), "the PDF has no {heading:?}");
    }
    // pdftotext reads the box "[ ]" back as "[]".
    let boxes = text.replace("[ ]", "[]").matches("[]").count();
    assert_eq!(
        boxes,
        sheet["checklist"].as_array().unwrap().len(),
        "a tick box per batch"
    );
}

/// Station cards of the two-section demo: a set per station of each section (6 on Monday, 5
/// on Wednesday), each headed with its section and day, with the expected times at the
/// section's temperature; none overflows, on both papers.
fn station_cards_of_a_week_follow_each_section() {
    let browser = browser();
    let dir = tempfile::tempdir().unwrap();
    let spec = Path::new("plans/birchfield-two-sections.toml");
    let report = clockprep::plan(clockprep::error::SpecSource::new(
        "plans/birchfield-two-sections.toml",
        std::fs::read_to_string(spec).unwrap(),
    ))
    .unwrap();
    // 4 runs: a set-up card and two run cards (3 + 1 runs) per station, 11 stations.
    let cards = (6 + 5) * 3;
    assert_eq!(
        clockprep::export::cards::pages(&report, clockprep::export::cards::Per::Station),
        cards
    );
    let wed = &report.sections[1];
    let reference = wed.runs[0].time_s.unwrap();
    for paper in ["a4", "letter"] {
        let (html, pdf) = print(spec, "station", paper, dir.path());
        let what = format!("week station cards on {paper}");
        assert_readable(&pdf, &what);
        assert_eq!(pdf_pages(&pdf), cards, "{what}");
        assert_eq!(
            overflowing_cards(&html, &browser),
            format!("cards={cards} overflow="),
            "{what}"
        );
        let text: String = (1..=cards).map(|p| page_text(&pdf, p)).collect();
        let flat = text.split_whitespace().collect::<Vec<_>>().join(" ");
        assert!(
            flat.contains("Section 02, Wed 2026-12-09 · Station 5 of 5"),
            "{what}"
        );
        assert!(!flat.contains("Station 6 of 5"), "{what}");
        assert!(flat.contains("at 22 °C"), "{what}");
        // The Wednesday reference run's time as a stopwatch reads it (whole seconds).
        assert!(
            flat.contains(&format!("{:.0} s", reference)),
            "{what}: no {reference} s"
        );
        // Run cards list each section's expected time, and still fit.
        let (html, pdf) = print(spec, "run", paper, dir.path());
        let what = format!("week run cards on {paper}");
        assert_readable(&pdf, &what);
        let runs = report.runs.len() + 1;
        assert_eq!(
            overflowing_cards(&html, &browser),
            format!("cards={runs} overflow="),
            "{what}"
        );
        assert!(page_text(&pdf, 2).contains("By section"), "{what}");
    }
}
