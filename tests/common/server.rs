//! `clockprep serve` as a child process on a free loopback port, and a small HTTP/1.1 client
//! over a plain socket (so a test can send any Host or Origin it likes). Every request goes to
//! 127.0.0.1 only.

use std::io::{BufRead, BufReader, Read, Write};
use std::net::TcpStream;
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::time::Duration;

pub struct Server {
    pub child: Child,
    pub port: u16,
    pub url: String,
    /// Lines the server printed on stdout after the address.
    pub stdout: std::sync::Mutex<std::sync::mpsc::Receiver<String>>,
}

/// One answer: status code, headers (lower-case names) and body.
pub struct Answer {
    pub status: u16,
    pub headers: Vec<(String, String)>,
    pub body: Vec<u8>,
}

impl Answer {
    pub fn text(&self) -> String {
        String::from_utf8_lossy(&self.body).into_owned()
    }
    pub fn json(&self) -> serde_json::Value {
        serde_json::from_slice(&self.body)
            .unwrap_or_else(|e| panic!("not JSON ({e}): {}", self.text()))
    }
    pub fn header(&self, name: &str) -> Option<&str> {
        self.headers
            .iter()
            .find(|(n, _)| n == name)
            .map(|(_, v)| v.as_str())
    }
}

impl Server {
    /// Start `clockprep serve [spec] --port 0` and wait for the address it prints.
    pub fn start(spec: Option<&Path>) -> Server {
        let mut cmd = Command::new(assert_cmd::cargo::cargo_bin("clockprep"));
        cmd.arg("serve");
        if let Some(s) = spec {
            cmd.arg(s);
        }
        let mut child = cmd
            .args(["--port", "0"])
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .expect("clockprep serve starts");
        let out = child.stdout.take().unwrap();
        let (tx, rx) = std::sync::mpsc::channel();
        std::thread::spawn(move || {
            for line in BufReader::new(out).lines().map_while(Result::ok) {
                if tx.send(line).is_err() {
                    break;
                }
            }
        });
        let first = rx
            .recv_timeout(Duration::from_secs(30))
            .expect("the server prints its address");
        let url = first
            .split_whitespace()
            .find(|w| w.starts_with("http://"))
            .unwrap_or_else(|| panic!("no address in {first:?}"))
            .to_string();
        let port = url
            .trim_end_matches('/')
            .rsplit(':')
            .next()
            .and_then(|p| p.parse().ok())
            .expect("a port");
        Server {
            child,
            port,
            url,
            stdout: std::sync::Mutex::new(rx),
        }
    }

    /// The host the server answers to.
    pub fn host(&self) -> String {
        format!("127.0.0.1:{}", self.port)
    }

    /// Send a request with exactly these headers (Host included unless `host` is None).
    pub fn raw(
        &self,
        method: &str,
        path: &str,
        host: Option<&str>,
        headers: &[(&str, &str)],
        body: &[u8],
    ) -> Answer {
        let mut s = TcpStream::connect(("127.0.0.1", self.port)).expect("connect");
        s.set_read_timeout(Some(Duration::from_secs(60))).unwrap();
        let mut head = format!("{method} {path} HTTP/1.1\r\n");
        if let Some(h) = host {
            head.push_str(&format!("Host: {h}\r\n"));
        }
        for (k, v) in headers {
            head.push_str(&format!("{k}: {v}\r\n"));
        }
        head.push_str(&format!(
            "Content-Length: {}\r\nConnection: close\r\n\r\n",
            body.len()
        ));
        s.write_all(head.as_bytes()).unwrap();
        // A server may answer (413) before reading all of a large body; a write error then is
        // part of the answer, not a failure of the test.
        let _ = s.write_all(body);
        let mut all = Vec::new();
        let _ = s.read_to_end(&mut all);
        parse(&all)
    }

    /// POST JSON to the server as its own page would.
    pub fn post_json(&self, path: &str, body: &serde_json::Value) -> Answer {
        let origin = format!("http://{}", self.host());
        self.raw(
            "POST",
            path,
            Some(&self.host()),
            &[("Content-Type", "application/json"), ("Origin", &origin)],
            body.to_string().as_bytes(),
        )
    }

    pub fn get(&self, path: &str) -> Answer {
        self.raw("GET", path, Some(&self.host()), &[], b"")
    }

    /// The random token the page carries for Save.
    pub fn token(&self) -> String {
        let page = self.get("/").text();
        let at = page
            .find("name=\"clockprep-token\" content=\"")
            .expect("token meta")
            + 32;
        page[at..at + 32].to_string()
    }

    /// The server's resident memory now and at its peak, kB (Linux /proc).
    pub fn memory_kb(&self) -> (u64, u64) {
        let status = std::fs::read_to_string(format!("/proc/{}/status", self.child.id()))
            .unwrap_or_default();
        let field = |name: &str| {
            status
                .lines()
                .find_map(|l| l.strip_prefix(name))
                .and_then(|v| v.split_whitespace().next()?.parse().ok())
                .unwrap_or(0)
        };
        (field("VmRSS:"), field("VmHWM:"))
    }

    /// Send Ctrl-C (SIGINT) and wait for the process to end; its exit code.
    pub fn interrupt(mut self) -> Option<i32> {
        let _ = Command::new("kill")
            .args(["-INT", &self.child.id().to_string()])
            .status();
        for _ in 0..200 {
            if let Ok(Some(status)) = self.child.try_wait() {
                return status.code();
            }
            std::thread::sleep(Duration::from_millis(25));
        }
        None
    }
}

impl Drop for Server {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

fn parse(all: &[u8]) -> Answer {
    let split = all
        .windows(4)
        .position(|w| w == b"\r\n\r\n")
        .unwrap_or_else(|| panic!("no HTTP answer: {:?}", String::from_utf8_lossy(all)));
    let head = String::from_utf8_lossy(&all[..split]).into_owned();
    let mut lines = head.lines();
    let status = lines
        .next()
        .and_then(|l| l.split_whitespace().nth(1))
        .and_then(|c| c.parse().ok())
        .expect("a status line");
    let headers: Vec<(String, String)> = lines
        .filter_map(|l| l.split_once(':'))
        .map(|(k, v)| (k.trim().to_ascii_lowercase(), v.trim().to_string()))
        .collect();
    let mut body = all[split + 4..].to_vec();
    if headers
        .iter()
        .any(|(k, v)| k == "transfer-encoding" && v.contains("chunked"))
    {
        body = dechunk(&body);
    }
    Answer {
        status,
        headers,
        body,
    }
}

fn dechunk(mut b: &[u8]) -> Vec<u8> {
    let mut out = Vec::new();
    while let Some(end) = b.windows(2).position(|w| w == b"\r\n") {
        let size =
            usize::from_str_radix(String::from_utf8_lossy(&b[..end]).trim(), 16).unwrap_or(0);
        if size == 0 {
            break;
        }
        let start = end + 2;
        out.extend_from_slice(&b[start..(start + size).min(b.len())]);
        b = &b[(start + size + 2).min(b.len())..];
    }
    out
}

/// A spec file in a fresh folder (kept while the folder lives).
pub fn spec_file(text: &str) -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("lab.toml");
    std::fs::write(&path, text).unwrap();
    (dir, path)
}
