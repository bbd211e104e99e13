//! The page of `clockprep serve` driven in a real headless Chromium (headless_chrome over the
//! DevTools protocol): edit the form, type a bad unit, apply a suggestion, upload pilot times,
//! print cards. Run with libtest-mimic so that without Chromium the tests show as ignored,
//! unless CLOCKPREP_REQUIRE_BROWSER is set (CI sets it). CLOCKPREP_SCREENSHOTS=DIR also saves
//! the page's main views as PNGs there (for the README).

mod common;

use common::server::{spec_file, Server};
use common::BROMATE;
use headless_chrome::protocol::cdp::Page::CaptureScreenshotFormatOption;
use headless_chrome::{Browser, LaunchOptions, Tab};
use serde_json::Value;
use std::ffi::OsStr;
use std::path::{Path, PathBuf};
use std::process;
use std::sync::Arc;
use std::time::{Duration, Instant};

const PILOT: &str = include_str!("../plans/maple-hollow-pilot.csv");

fn tools() -> Option<PathBuf> {
    let browser = clockprep::export::pdf::find_browser();
    let poppler = process::Command::new("pdfinfo").arg("-v").output().is_ok();
    browser.filter(|_| poppler)
}

fn main() {
    let args = libtest_mimic::Arguments::from_args();
    let missing = tools().is_none();
    if missing && std::env::var_os("CLOCKPREP_REQUIRE_BROWSER").is_some() {
        eprintln!("CLOCKPREP_REQUIRE_BROWSER is set but chromium or poppler-utils is missing");
        process::exit(101);
    }
    let tests: Vec<(&str, fn())> = vec![
        (
            "editing_a_target_in_the_form_changes_the_toml_and_the_mixing_sheet",
            editing_a_target_in_the_form_changes_the_toml_and_the_mixing_sheet,
        ),
        (
            "a_bad_unit_is_located_beside_its_field_and_the_last_good_sheets_stay",
            a_bad_unit_is_located_beside_its_field_and_the_last_good_sheets_stay,
        ),
        (
            "applying_the_tune_suggestion_changes_the_timing_line",
            applying_the_tune_suggestion_changes_the_timing_line,
        ),
        (
            "an_uploaded_pilot_csv_is_fitted_and_its_prior_applies",
            an_uploaded_pilot_csv_is_fitted_and_its_prior_applies,
        ),
        (
            "cards_printed_from_the_page_read_back_at_their_size_and_page_count",
            cards_printed_from_the_page_read_back_at_their_size_and_page_count,
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

/// A server on the demo (in a temp folder) and a browser tab on its page, the first answer in.
struct Session {
    _dir: tempfile::TempDir,
    spec: PathBuf,
    server: Server,
    _browser: Browser,
    tab: Arc<Tab>,
}

fn open() -> Session {
    open_on(BROMATE)
}

/// The demo with a thiosulfate stock ten times stronger, delivered by a graduated pipet: tune
/// then has a better deliverable timing concentration to offer than the spec's.
fn tunable() -> String {
    BROMATE.replace(
        "name = \"Na2S2O3 1.00 mM\"\nsolute = \"Na2S2O3·5H2O\"\ncontains = { \"S2O3^2-\" = \"1.00 mM\", \"Na+\" = \"2.00 mM\" }\ndevices = [\"5 mL transfer pipet\"]",
        "name = \"Na2S2O3 10.0 mM\"\nsolute = \"Na2S2O3·5H2O\"\ncontains = { \"S2O3^2-\" = \"10.0 mM\", \"Na+\" = \"20.0 mM\" }\ndevices = [\"10 mL graduated pipet\"]",
    )
}

fn open_on(text: &str) -> Session {
    let (dir, _) = spec_file(text);
    let spec = dir.path().join("maple-hollow-bromate.toml");
    std::fs::write(&spec, text).unwrap();
    let server = Server::start(Some(&spec));
    let profile = tempfile::tempdir().unwrap();
    let options = LaunchOptions::default_builder()
        .path(tools())
        .headless(true)
        .sandbox(false)
        .window_size(Some((1280, 800)))
        .user_data_dir(Some(profile.path().to_path_buf()))
        .idle_browser_timeout(Duration::from_secs(120))
        .args(vec![
            OsStr::new("--disable-gpu"),
            OsStr::new("--disable-quic"),
            OsStr::new("--disable-component-update"),
        ])
        .build()
        .unwrap();
    let browser = Browser::new(options).expect("chromium starts");
    std::mem::forget(profile);
    let tab = browser.new_tab().unwrap();
    tab.set_default_timeout(Duration::from_secs(30));
    tab.navigate_to(&server.url).unwrap();
    tab.wait_until_navigated().unwrap();
    let s = Session {
        _dir: dir,
        spec,
        server,
        _browser: browser,
        tab,
    };
    s.wait(
        "window.clockprep && window.clockprep.updates >= 1",
        "the first answer",
    );
    s
}

impl Session {
    fn eval(&self, js: &str) -> Value {
        self.tab
            .evaluate(js, false)
            .unwrap_or_else(|e| panic!("{js}: {e}"))
            .value
            .unwrap_or(Value::Null)
    }

    /// Evaluate a promise and wait for its value (passed back as JSON text).
    fn eval_async(&self, js: &str) -> Value {
        let text = self
            .tab
            .evaluate(&format!("({js}).then(JSON.stringify)"), true)
            .unwrap_or_else(|e| panic!("{js}: {e}"))
            .value
            .unwrap_or(Value::Null);
        serde_json::from_str(text.as_str().unwrap_or("null")).unwrap()
    }

    fn wait(&self, condition: &str, what: &str) {
        let start = Instant::now();
        while start.elapsed() < Duration::from_secs(30) {
            if self.eval(&format!("!!({condition})")) == Value::Bool(true) {
                return;
            }
            std::thread::sleep(Duration::from_millis(20));
        }
        panic!("waited 30 s for {what} ({condition})");
    }

    fn updates(&self) -> u64 {
        self.eval("window.clockprep.updates").as_u64().unwrap()
    }

    /// Wait for the answer after the one counted as `before`.
    fn next_answer(&self, before: u64) {
        self.wait(
            &format!("window.clockprep.updates > {before}"),
            "the next answer",
        );
    }

    fn toml(&self) -> String {
        self.eval("document.getElementById('toml').value")
            .as_str()
            .unwrap()
            .to_string()
    }

    fn pane_text(&self, id: &str) -> String {
        self.eval(&format!(
            "(document.getElementById('pane-{id}').shadowRoot || {{textContent: ''}}).textContent"
        ))
        .as_str()
        .unwrap_or_default()
        .to_string()
    }

    /// Type into a form input (by the field's path and the input's class) and leave it.
    fn type_into(&self, path: &str, input: &str, value: &str) {
        let js = format!(
            "(function(){{var f=document.querySelector('#form [data-path=\"'+CSS.escape({path:?})+'\"]'); var i=f.querySelector('input.{input}'); i.focus(); i.value={value:?}; i.dispatchEvent(new Event('change',{{bubbles:true}})); return true;}})()"
        );
        assert_eq!(self.eval(&js), Value::Bool(true), "field {path}");
    }

    fn screenshot(&self, name: &str) {
        let Some(dir) = std::env::var_os("CLOCKPREP_SCREENSHOTS") else {
            return;
        };
        let png = self
            .tab
            .capture_screenshot(CaptureScreenshotFormatOption::Png, None, None, true)
            .unwrap();
        std::fs::write(Path::new(&dir).join(format!("{name}.png")), png).unwrap();
    }
}

fn editing_a_target_in_the_form_changes_the_toml_and_the_mixing_sheet() {
    let s = open();
    s.screenshot("page-mixing");
    assert!(s.pane_text("mixing").contains("Volumes per run (mL)"));
    // Run 2 ('iodide x2') to 3.00 mM iodide: 15.00 mL of KI 0.0100 M in 50.0 mL (M1V1 = M2V2).
    let before = s.updates();
    s.type_into(r#"["run",1,"targets","I-"]"#, "num", "3.00");
    s.next_answer(before);
    let toml = s.toml();
    assert!(
        toml.contains("name = \"iodide x2\"\ntargets = { \"I-\" = \"3.00 mM\", \"BrO3-\" = \"8.00 mM\", \"H+\" = \"20.0 mM\" }"),
        "{toml}"
    );
    // The pane shows exactly what the CLI computes for the edited text.
    let cli = common::run("plan", &toml, &["-f", "json"]);
    let plan: Value = serde_json::from_str(&cli.stdout).unwrap();
    let run = plan["runs"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["name"] == "iodide x2")
        .unwrap()
        .clone();
    let text = s.pane_text("mixing");
    let ki = run["volumes"]
        .as_array()
        .unwrap()
        .iter()
        .find(|x| x["stock"] == "KI 0.0100 M")
        .map(|x| x["mL"].as_f64().unwrap())
        .unwrap();
    approx::assert_relative_eq!(ki, 15.0, max_relative = 1e-9);
    assert!(text.contains("15.00"), "the KI volume on the sheet");
    // Edit → pane in the browser, measured by the page itself (printed, not asserted: speed is
    // a benchmark's business).
    let mut times = Vec::new();
    for v in ["2.50", "3.50", "3.00", "2.50", "3.50"] {
        let before = s.updates();
        s.type_into(r#"["run",1,"targets","I-"]"#, "num", v);
        s.next_answer(before);
        times.push(s.eval("window.clockprep.lastUpdateMs").as_f64().unwrap());
    }
    times.sort_by(f64::total_cmp);
    eprintln!(
        "edit -> pane update in the browser: median {:.1} ms (server {:.1} ms)",
        times[times.len() / 2],
        s.eval("window.clockprep.serverMs").as_f64().unwrap_or(0.0)
    );
    // The editor and the file: nothing is written until Save.
    assert_eq!(std::fs::read_to_string(&s.spec).unwrap(), BROMATE);
    s.eval("document.getElementById('save').click()");
    s.wait(
        "document.getElementById('save-message').textContent.indexOf('saved to') === 0",
        "Save",
    );
    assert_eq!(std::fs::read_to_string(&s.spec).unwrap(), s.toml());
    let _ = &s.server;
}

fn a_bad_unit_is_located_beside_its_field_and_the_last_good_sheets_stay() {
    let s = open();
    let good = s.pane_text("mixing");
    let before = s.updates();
    s.type_into(r#"["plan","total_volume"]"#, "unit", "mQ");
    s.next_answer(before);
    let msg = s.eval(
        "document.querySelector('#form .field.bad[data-path=\\'[\"plan\",\"total_volume\"]\\'] .msg').textContent",
    );
    let msg = msg.as_str().expect("a message beside the field");
    assert!(msg.contains("mQ"), "{msg}");
    let cli = common::run("plan", &s.toml(), &[]);
    assert_eq!(cli.code, 2);
    let first_line = msg.split("Fix:").next().unwrap().trim();
    assert!(
        cli.stderr.contains(first_line),
        "the CLI's message: {first_line:?} in {}",
        cli.stderr
    );
    assert!(msg.contains(":8:"), "the place in the TOML: {msg}");
    // The last good sheets stay, greyed, with the refusal on top.
    assert_eq!(
        s.eval("document.getElementById('panes').classList.contains('stale')"),
        Value::Bool(true)
    );
    assert_eq!(s.pane_text("mixing"), good);
    assert_eq!(
        s.eval("document.getElementById('refusal').classList.contains('hidden')"),
        Value::Bool(false)
    );
    s.screenshot("page-refusal");
    // 'Show in the TOML text' selects the offending text.
    s.eval("document.getElementById('goto').click()");
    let selected = s.eval(
        "(function(t){return t.value.substring(t.selectionStart, t.selectionEnd)})(document.getElementById('toml'))",
    );
    assert!(selected.as_str().unwrap().contains("mQ"), "{selected}");
    // Fixed, the sheets come back.
    let before = s.updates();
    s.eval("document.querySelector('.editor .tab[data-tab=form]').click()");
    s.type_into(r#"["plan","total_volume"]"#, "unit", "mL");
    s.next_answer(before);
    assert_eq!(
        s.eval("document.getElementById('panes').classList.contains('stale')"),
        Value::Bool(false)
    );
    assert_eq!(s.toml(), BROMATE);
}

fn applying_the_tune_suggestion_changes_the_timing_line() {
    let spec = tunable();
    assert_ne!(spec, BROMATE);
    let s = open_on(&spec);
    // What the CLI prints for the same spec: the [timing] line to paste.
    let cli = common::run("tune", &spec, &["-f", "toml"]);
    let line = cli
        .stdout
        .lines()
        .find(|l| l.starts_with("concentration = "))
        .expect("tune suggests a concentration")
        .to_string();
    assert_ne!(line, "concentration = \"0.100 mM\"", "a change to apply");
    s.eval("document.querySelector('.sheets .tab[data-tab=tune]').click()");
    s.wait(
        "document.querySelector('button.apply[data-kind=tune]')",
        "the Apply button",
    );
    s.screenshot("page-tune");
    let before = s.updates();
    s.eval("document.querySelector('button.apply[data-kind=tune]').click()");
    s.next_answer(before);
    let toml = s.toml();
    assert!(toml.contains(&line), "{line} in {toml}");
    assert_eq!(
        toml,
        spec.replace("concentration = \"0.100 mM\"", &line),
        "only the timing line changes"
    );
    let changed = s.eval("document.getElementById('changed').textContent");
    let changed = changed.as_str().unwrap();
    assert!(
        changed.contains("- concentration = \"0.100 mM\""),
        "{changed}"
    );
    assert!(changed.contains(&format!("+ {line}")), "{changed}");
    // The mixing sheet follows: its timing line as the CLI prints it for the new text.
    let plan = common::run("plan", &toml, &[]).stdout;
    let timing = plan
        .lines()
        .find(|l| l.starts_with("Timing reagent:"))
        .expect("the timing line");
    let words: Vec<&str> = timing.split_whitespace().collect();
    let at = words
        .windows(3)
        .position(|w| w[1] == "mM" && w[2] == "in")
        .unwrap();
    let shown = format!("{} mM in every run", words[at]);
    assert!(s.pane_text("mixing").contains(&shown), "{shown}");
}

fn an_uploaded_pilot_csv_is_fitted_and_its_prior_applies() {
    let s = open();
    let dir = tempfile::tempdir().unwrap();
    let csv = dir.path().join("maple-hollow-pilot.csv");
    std::fs::write(&csv, PILOT).unwrap();
    s.eval("document.querySelector('.sheets .tab[data-tab=fit]').click()");
    let before = s.updates();
    s.tab
        .wait_for_element("#times")
        .unwrap()
        .set_input_files(&[csv.to_str().unwrap()])
        .unwrap();
    s.next_answer(before);
    s.wait(
        "document.querySelector('button.apply[data-kind=fit]')",
        "the fit",
    );
    s.screenshot("page-fit");
    let fitted = s.pane_text("fit");
    // The same k the CLI fits from the same file.
    let cli = common::run_with(
        "fit",
        BROMATE,
        &[("pilot.csv", PILOT)],
        &["pilot.csv", "-f", "text"],
    );
    let k = cli
        .stdout
        .lines()
        .find(|l| l.starts_with("k = "))
        .expect("the CLI's k line");
    let k_value = k.split(' ').take(3).collect::<Vec<_>>().join(" ");
    assert!(fitted.contains(&k_value), "{k_value} in {fitted}");
    assert!(fitted.contains("10 trials"), "{fitted}");
    let before = s.updates();
    s.eval("document.querySelector('button.apply[data-kind=fit]').click()");
    s.next_answer(before);
    let toml = s.toml();
    assert!(
        !toml.contains("preset = \"bromate-iodide\""),
        "the prior replaced"
    );
    assert!(
        toml.contains("fit to 10 trials in maple-hollow-pilot.csv"),
        "{toml}"
    );
    assert_eq!(
        s.eval("document.getElementById('panes').classList.contains('stale')"),
        Value::Bool(false),
        "the fitted prior is a valid spec"
    );
}

fn cards_printed_from_the_page_read_back_at_their_size_and_page_count() {
    let s = open();
    let got = s.eval_async("window.clockprep.fetchOut('cards.pdf', {paper: 'a4', per: 'station'})");
    assert_eq!(got["status"], 200, "{got}");
    assert_eq!(got["type"], "application/pdf");
    let pdf = base64(got["base64"].as_str().unwrap());
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("cards.pdf");
    std::fs::write(&path, &pdf).unwrap();
    let report = clockprep::plan(clockprep::error::SpecSource::new("d", BROMATE)).unwrap();
    let expected = clockprep::export::cards::pages(&report, clockprep::export::cards::Per::Station);
    assert_eq!(pdf_pages(&path), expected);
    // Read at arm's length: nothing under 9 pt, the body at 11 pt (as tests/browser.rs checks
    // the CLI's cards; DejaVu Sans word boxes are about 1.164 x the font size, measured there).
    let mut h = word_heights(&path);
    h.sort_by(f64::total_cmp);
    assert!(h[0] >= 9.0 * 1.164 * 0.95, "text of {:.1} pt", h[0] / 1.164);
    assert!(h[h.len() / 2] >= 11.0 * 1.164 * 0.95);
    let text = String::from_utf8_lossy(
        &process::Command::new("pdftotext")
            .arg(&path)
            .arg("-")
            .output()
            .unwrap()
            .stdout,
    )
    .into_owned();
    assert!(
        text.contains("goggles") || text.contains("Goggles"),
        "cautions on the cards"
    );
    s.eval("document.querySelector('.sheets .tab[data-tab=print]').click()");
    s.screenshot("page-print");
}

fn pdf_pages(pdf: &Path) -> usize {
    let out = process::Command::new("pdfinfo").arg(pdf).output().unwrap();
    String::from_utf8_lossy(&out.stdout)
        .lines()
        .find_map(|l| l.strip_prefix("Pages:"))
        .and_then(|n| n.trim().parse().ok())
        .expect("pdfinfo reports the page count")
}

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

fn base64(s: &str) -> Vec<u8> {
    let val = |c: u8| match c {
        b'A'..=b'Z' => c - b'A',
        b'a'..=b'z' => c - b'a' + 26,
        b'0'..=b'9' => c - b'0' + 52,
        b'+' => 62,
        _ => 63,
    };
    let clean: Vec<u8> = s.bytes().filter(|&c| c != b'=').collect();
    let mut out = Vec::with_capacity(clean.len() * 3 / 4);
    for chunk in clean.chunks(4) {
        let v: Vec<u32> = chunk.iter().map(|&c| u32::from(val(c))).collect();
        let n = v
            .iter()
            .enumerate()
            .fold(0u32, |acc, (i, x)| acc | x << (18 - 6 * i));
        out.push((n >> 16) as u8);
        if v.len() > 2 {
            out.push((n >> 8) as u8);
        }
        if v.len() > 3 {
            out.push(n as u8);
        }
    }
    out
}
