//! `clockprep serve` through the real binary on a loopback port: who it answers, what it
//! refuses, a bounded load of concurrent recomputes, Save against an outside edit, and a clean
//! stop on Ctrl-C. Every request goes to 127.0.0.1; every loop is bounded.

mod common;

use common::server::{spec_file, Server};
use common::BROMATE;
use serde_json::json;

#[test]
fn the_page_and_its_assets_are_served_with_the_spec_and_cautions() {
    let (_dir, path) = spec_file(BROMATE);
    let s = Server::start(Some(&path));
    assert!(s.url.starts_with("http://127.0.0.1:"), "{}", s.url);
    let page = s.get("/");
    assert_eq!(page.status, 200);
    let html = page.text();
    assert!(
        html.contains("Maple Hollow CC"),
        "the spec's text is in the editor"
    );
    assert!(html.contains("goggles") && html.contains("SDS") && html.contains("safety officer"));
    assert!(page
        .header("content-security-policy")
        .is_some_and(|c| c.contains("script-src 'self'")));
    assert_eq!(s.get("/assets/page.js").status, 200);
    assert_eq!(s.get("/assets/page.css").status, 200);
}

#[test]
fn a_request_naming_another_host_is_refused() {
    // A page on another site reaching this port through a DNS name that points at 127.0.0.1
    // (DNS rebinding) names that site in Host.
    let s = Server::start(None);
    for host in [
        Some("rebind.example:80"),
        Some(&*format!("rebind.example:{}", s.port)),
        Some("127.0.0.1:1"),
        None,
    ] {
        let a = s.raw("GET", "/", host, &[], b"");
        assert_eq!(a.status, 421, "Host {host:?}: {}", a.text());
        assert!(!a.text().contains("clockprep-token"));
    }
    let ok = s.raw("GET", "/", Some(&format!("localhost:{}", s.port)), &[], b"");
    assert_eq!(ok.status, 200);
}

#[test]
fn a_post_from_another_origin_is_refused() {
    let s = Server::start(None);
    let body = json!({"text": BROMATE}).to_string();
    for (name, value) in [
        ("Origin", "http://evil.example"),
        ("Origin", "null"),
        ("Sec-Fetch-Site", "cross-site"),
    ] {
        let a = s.raw(
            "POST",
            "/api/compute",
            Some(&s.host()),
            &[("Content-Type", "application/json"), (name, value)],
            body.as_bytes(),
        );
        assert_eq!(a.status, 403, "{name}: {value}");
    }
    // The same request from the page itself is answered.
    assert_eq!(
        s.post_json("/api/compute", &json!({"text": BROMATE}))
            .status,
        200
    );
}

#[test]
fn a_body_over_one_mebibyte_is_refused_and_the_server_goes_on() {
    let s = Server::start(None);
    let big = json!({ "text": "#".repeat(clockprep::serve::BODY_LIMIT + 10) });
    let a = s.post_json("/api/compute", &big);
    assert_eq!(a.status, 413, "{}", a.text());
    let after = s.post_json("/api/compute", &json!({"text": BROMATE}));
    assert_eq!(after.status, 200);
}

#[test]
fn a_malformed_spec_is_answered_with_the_located_message_of_the_cli() {
    let s = Server::start(None);
    let bad = BROMATE.replace("total_volume = \"50.0 mL\"", "total_volume = \"50.0 mQ\"");
    let a = s.post_json("/api/compute", &json!({ "text": bad }));
    assert_eq!(a.status, 200);
    let r = a.json();
    let e = &r["computed"]["error"];
    assert_eq!(e["line"], 8);
    assert_eq!(e["field"], json!(["plan", "total_volume"]));
    // The CLI's own message for the same text.
    let cli = common::run("plan", &bad, &[]);
    assert_eq!(cli.code, 2);
    let first = e["message"].as_str().unwrap();
    assert!(cli.stderr.contains(first), "{first} / {}", cli.stderr);
    assert!(r["computed"]["panes"].as_array().unwrap().is_empty());
    // The form shows it beside the field.
    assert!(r["form_html"].as_str().unwrap().contains(first));
    // Not TOML at all: located too, and the form is left as the page has it.
    let a = s
        .post_json("/api/compute", &json!({ "text": "[plan\n" }))
        .json();
    assert!(a["computed"]["error"]["line"].is_number(), "{a}");
    assert!(a["form_html"].is_null());
    // Not JSON: refused by the server, which goes on.
    let a = s.raw(
        "POST",
        "/api/compute",
        Some(&s.host()),
        &[("Content-Type", "application/json")],
        b"{\"text\": ",
    );
    assert!(a.status == 400 || a.status == 422, "{}", a.status);
    assert_eq!(s.get("/").status, 200);
}

#[test]
fn two_hundred_concurrent_recomputes_are_all_answered_and_memory_stays_flat() {
    let s = std::sync::Arc::new(Server::start(None));
    let warm = s.post_json("/api/compute", &json!({"text": BROMATE}));
    assert_eq!(warm.status, 200);
    let (before, _) = s.memory_kb();
    // Bounded: 200 requests, each on its own connection, all at once; each a distinct spec
    // (a different stations count) so no answer can be another's.
    let handles: Vec<_> = (0..200)
        .map(|i| {
            let s = s.clone();
            std::thread::spawn(move || {
                let text = BROMATE.replace("stations = 8 ", &format!("stations = {} ", 1 + i % 20));
                let a = s.post_json("/api/compute", &json!({ "text": text }));
                (i, a.status, a.json())
            })
        })
        .collect();
    let mut answered = 0;
    for h in handles {
        let (i, status, r) = h.join().expect("a request thread");
        assert_eq!(status, 200, "request {i}");
        assert!(
            r["computed"]["error"].is_null(),
            "request {i}: {}",
            r["computed"]["error"]
        );
        let mixing = r["computed"]["panes"][0]["html"].as_str().unwrap();
        let stations = 1 + i % 20;
        assert!(
            mixing.contains(&format!("| {stations} station(s) x 2 replicate(s)")),
            "request {i}"
        );
        answered += 1;
    }
    assert_eq!(answered, 200);
    let (after, peak) = s.memory_kb();
    eprintln!("server memory: {before} kB before, {after} kB after, {peak} kB at peak");
    // The bound: at most 100 MB under this load.
    assert!(peak < 100 * 1024, "peak {peak} kB");
}

#[test]
fn save_writes_the_file_keeps_the_previous_version_and_needs_the_token() {
    let (dir, path) = spec_file(BROMATE);
    let s = Server::start(Some(&path));
    let token = s.token();
    let edited = BROMATE.replace("stations = 8 ", "stations = 6 ");
    let body = json!({ "text": edited }).to_string();
    let origin = format!("http://{}", s.host());
    let save = |tok: &str| {
        s.raw(
            "POST",
            "/api/save",
            Some(&s.host()),
            &[
                ("Content-Type", "application/json"),
                ("Origin", &origin),
                ("X-Clockprep-Token", tok),
            ],
            body.as_bytes(),
        )
    };
    let refused = save("0123456789abcdef0123456789abcdef");
    assert_eq!(refused.status, 403);
    assert_eq!(std::fs::read_to_string(&path).unwrap(), BROMATE);
    let a = save(&token);
    assert_eq!(a.status, 200);
    assert_eq!(a.json()["saved"], true, "{}", a.text());
    assert_eq!(std::fs::read_to_string(&path).unwrap(), edited);
    assert_eq!(
        std::fs::read_to_string(dir.path().join("lab.toml~")).unwrap(),
        BROMATE
    );
}

#[test]
fn a_save_racing_an_outside_edit_is_refused_and_nothing_is_lost() {
    let (dir, path) = spec_file(BROMATE);
    let s = Server::start(Some(&path));
    let token = s.token();
    // Someone edits the file in an editor while the page is open.
    let outside = BROMATE.replace("replicates = 2 ", "replicates = 3 ");
    std::fs::write(&path, &outside).unwrap();
    let page = BROMATE.replace("stations = 8 ", "stations = 6 ");
    let origin = format!("http://{}", s.host());
    let a = s.raw(
        "POST",
        "/api/save",
        Some(&s.host()),
        &[
            ("Content-Type", "application/json"),
            ("Origin", &origin),
            ("X-Clockprep-Token", &token),
        ],
        json!({ "text": page }).to_string().as_bytes(),
    );
    let r = a.json();
    assert_eq!(r["saved"], false);
    assert_eq!(
        r["download"], true,
        "the page offers its text as a download"
    );
    assert!(r["message"].as_str().unwrap().contains("changed on disk"));
    assert_eq!(std::fs::read_to_string(&path).unwrap(), outside);
    assert!(!dir.path().join("lab.toml~").exists());
}

#[test]
fn without_a_file_save_offers_a_download() {
    let s = Server::start(None);
    let token = s.token();
    let origin = format!("http://{}", s.host());
    let a = s.raw(
        "POST",
        "/api/save",
        Some(&s.host()),
        &[
            ("Content-Type", "application/json"),
            ("Origin", &origin),
            ("X-Clockprep-Token", &token),
        ],
        json!({ "text": BROMATE }).to_string().as_bytes(),
    );
    let r = a.json();
    assert_eq!(
        (r["saved"].clone(), r["download"].clone()),
        (json!(false), json!(true))
    );
}

#[test]
fn ctrl_c_stops_the_server_cleanly() {
    let s = Server::start(None);
    assert_eq!(s.get("/").status, 200);
    let rx_port = s.port;
    let code = s.interrupt();
    assert_eq!(code, Some(0));
    assert!(std::net::TcpStream::connect(("127.0.0.1", rx_port)).is_err());
}

#[test]
fn downloads_carry_the_cli_bytes_and_a_workbook() {
    let s = Server::start(None);
    let origin = format!("http://{}", s.host());
    let form = |file: &str, extra: &str| {
        let body = format!("spec={}&times_name=&times_csv={extra}", urlencode(BROMATE));
        s.raw(
            "POST",
            &format!("/out/{file}"),
            Some(&s.host()),
            &[
                ("Content-Type", "application/x-www-form-urlencoded"),
                ("Origin", &origin),
            ],
            body.as_bytes(),
        )
    };
    let csv = form("mixing.csv", "");
    assert_eq!(csv.status, 200);
    let cli = common::run("plan", BROMATE, &["-f", "csv"]);
    assert_eq!(
        csv.text(),
        cli.stdout,
        "the same bytes as clockprep plan -f csv"
    );
    assert!(csv
        .header("content-disposition")
        .is_some_and(|d| d.starts_with("attachment; filename=\"new-lab-mixing.csv\"")));
    let cards = form("cards.html", "&paper=letter&per=run");
    assert_eq!(cards.status, 200);
    let cli = common::run("cards", BROMATE, &["--paper", "letter", "--per", "run"]);
    assert_eq!(cards.text(), cli.stdout);
    let book = form("workbook.xlsx", "");
    assert_eq!(book.status, 200);
    assert_eq!(&book.body[..2], b"PK", "an xlsx is a zip");
    assert_eq!(
        form("workbook.xlsx", "").body,
        book.body,
        "same spec, same bytes"
    );
    assert_eq!(form("../../etc/passwd", "").status, 404);
    let bad = s.raw(
        "POST",
        "/out/mixing.csv",
        Some(&s.host()),
        &[("Content-Type", "application/x-www-form-urlencoded")],
        b"spec=%5Bplan",
    );
    assert_eq!(bad.status, 422);
    assert!(bad.text().contains("nothing was made"));
}

fn urlencode(s: &str) -> String {
    s.bytes()
        .map(|b| match b {
            b'A'..=b'Z' | b'a'..=b'z' | b'0'..=b'9' | b'-' | b'.' | b'_' | b'~' => {
                (b as char).to_string()
            }
            _ => format!("%{b:02X}"),
        })
        .collect()
}
