//! The report page in a real browser: headless Chromium (Debian's
//! `chromium` package; `.ci/run` installs it) loads the HTML of the flawed
//! demo board over the DevTools protocol (`--remote-debugging-pipe`), with
//! console, log and exception events recorded, and takes a screenshot.
//! The page must load with no console error, warning or exception, and the
//! screenshot must show a drawn page (not blank).
//!
//! First the same harness loads a probe page that logs an error, throws and
//! references a missing image: the test only trusts a clean result after
//! it has seen those three caught.
//!
//! Where no Chromium is found the test is skipped with a message, unless
//! `STACKUP_LINT_REQUIRE_BROWSER=1` (set by `.ci/run` once it installed
//! Chromium), when a missing browser is a failure.

#![cfg(unix)]

use std::fs::File;
use std::io::{BufRead, BufReader, Write};
use std::os::fd::FromRawFd;
use std::os::unix::process::CommandExt;
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::sync::mpsc::{channel, Receiver};
use std::time::{Duration, Instant};

use base64::Engine as _;
use serde_json::{json, Value};

fn find_chromium() -> Option<PathBuf> {
    if let Some(p) = std::env::var_os("STACKUP_LINT_CHROMIUM") {
        return Some(PathBuf::from(p));
    }
    let path = std::env::var_os("PATH")?;
    for dir in std::env::split_paths(&path) {
        for name in ["chromium", "chromium-browser", "google-chrome"] {
            let p = dir.join(name);
            if p.is_file() {
                return Some(p);
            }
        }
    }
    None
}

/// A pipe: (read end, write end), both close-on-exec.
fn pipe() -> (File, File) {
    let mut fds = [0; 2];
    // SAFETY: `fds` is a valid array of two ints for pipe2 to fill.
    let rc = unsafe { libc::pipe2(fds.as_mut_ptr(), libc::O_CLOEXEC) };
    assert_eq!(rc, 0, "pipe2 failed");
    // SAFETY: both descriptors were just created and are owned here only.
    unsafe { (File::from_raw_fd(fds[0]), File::from_raw_fd(fds[1])) }
}

/// Chromium driven over `--remote-debugging-pipe`: requests on its fd 3,
/// NUL-separated JSON replies and events from its fd 4.
struct Browser {
    child: Child,
    to: File,
    from: Receiver<Value>,
    next_id: u64,
    /// Events seen while waiting for replies.
    events: Vec<Value>,
    _profile: tempfile::TempDir,
}

impl Browser {
    fn start(exe: &Path) -> Browser {
        use std::os::fd::AsRawFd;
        let profile = tempfile::tempdir().unwrap();
        let (cmd_read, cmd_write) = pipe();
        let (out_read, out_write) = pipe();
        let (r, w) = (cmd_read.as_raw_fd(), out_write.as_raw_fd());
        let mut cmd = Command::new(exe);
        cmd.args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-quic",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--remote-debugging-pipe",
            "--window-size=1280,2000",
            "--hide-scrollbars",
        ])
        .arg(format!("--user-data-dir={}", profile.path().display()))
        .arg("about:blank")
        .stdin(Stdio::null())
        .stdout(Stdio::null())
        .stderr(File::create(profile.path().join("stderr.txt")).unwrap());
        // SAFETY: only async-signal-safe calls (fcntl, dup2, close) between
        // fork and exec. The pipe ends are first copied above 10 so that
        // neither already sits on 3 or 4 (dup2 onto itself would keep
        // close-on-exec, and one could overwrite the other).
        unsafe {
            cmd.pre_exec(move || {
                let r2 = libc::fcntl(r, libc::F_DUPFD, 10);
                let w2 = libc::fcntl(w, libc::F_DUPFD, 10);
                if r2 < 0 || w2 < 0 || libc::dup2(r2, 3) < 0 || libc::dup2(w2, 4) < 0 {
                    return Err(std::io::Error::last_os_error());
                }
                libc::close(r2);
                libc::close(w2);
                Ok(())
            });
        }
        let child = cmd.spawn().expect("chromium starts");
        drop(cmd_read);
        drop(out_write);
        let (tx, rx) = channel();
        std::thread::spawn(move || {
            let mut reader = BufReader::new(out_read);
            let mut buf = Vec::new();
            while let Ok(n) = reader.read_until(0, &mut buf) {
                if n == 0 {
                    break;
                }
                if buf.last() == Some(&0) {
                    buf.pop();
                }
                if let Ok(v) = serde_json::from_slice::<Value>(&buf) {
                    if tx.send(v).is_err() {
                        break;
                    }
                }
                buf.clear();
            }
        });
        Browser {
            child,
            to: cmd_write,
            from: rx,
            next_id: 0,
            events: Vec::new(),
            _profile: profile,
        }
    }

    fn call(&mut self, session: Option<&str>, method: &str, params: Value) -> Value {
        self.next_id += 1;
        let id = self.next_id;
        let mut msg = json!({"id": id, "method": method, "params": params});
        if let Some(s) = session {
            msg["sessionId"] = json!(s);
        }
        let mut bytes = serde_json::to_vec(&msg).unwrap();
        bytes.push(0);
        if let Err(e) = self.to.write_all(&bytes) {
            panic!(
                "cannot send {method} to chromium ({e}); its stderr:\n{}",
                self.stderr()
            );
        }
        let deadline = Instant::now() + Duration::from_secs(90);
        loop {
            let left = deadline.saturating_duration_since(Instant::now());
            let v = self.from.recv_timeout(left).unwrap_or_else(|_| {
                panic!(
                    "no reply from chromium to {method}; its stderr:\n{}",
                    self.stderr()
                )
            });
            if v["id"] == json!(id) {
                if let Some(e) = v.get("error") {
                    panic!("{method} failed: {e}");
                }
                return v["result"].clone();
            }
            self.events.push(v);
        }
    }

    /// The end of Chromium's own log, for failure messages.
    fn stderr(&self) -> String {
        let text =
            std::fs::read_to_string(self._profile.path().join("stderr.txt")).unwrap_or_default();
        let lines: Vec<&str> = text.lines().filter(|l| !l.contains("dbus")).collect();
        lines[lines.len().saturating_sub(30)..].join("\n")
    }

    /// Wait for an event named `method` (already seen or coming).
    fn wait_event(&mut self, method: &str) {
        if self.events.iter().any(|e| e["method"] == json!(method)) {
            return;
        }
        let deadline = Instant::now() + Duration::from_secs(90);
        loop {
            let left = deadline.saturating_duration_since(Instant::now());
            let v = self
                .from
                .recv_timeout(left)
                .unwrap_or_else(|_| panic!("chromium never sent {method}"));
            let hit = v["method"] == json!(method);
            self.events.push(v);
            if hit {
                return;
            }
        }
    }
}

impl Drop for Browser {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

/// What went wrong on one page, as readable lines.
struct PageResult {
    problems: Vec<String>,
    screenshot: Vec<u8>,
}

/// Attach to the browser's page, open `url` and wait until it has loaded;
/// returns the session.
fn open_page(b: &mut Browser, url: &str) -> String {
    let targets = b.call(None, "Target.getTargets", json!({}));
    let target = targets["targetInfos"]
        .as_array()
        .and_then(|t| t.iter().find(|t| t["type"] == json!("page")))
        .map(|t| t["targetId"].clone())
        .expect("a page target");
    let attached = b.call(
        None,
        "Target.attachToTarget",
        json!({"targetId": target, "flatten": true}),
    );
    let session = attached["sessionId"].as_str().unwrap().to_string();
    let s = Some(session.as_str());
    b.call(s, "Page.enable", json!({}));
    b.call(s, "Runtime.enable", json!({}));
    b.call(s, "Log.enable", json!({}));
    b.events.clear();
    b.call(s, "Page.navigate", json!({"url": url}));
    b.wait_event("Page.loadEventFired");
    session
}

fn load_page(b: &mut Browser, url: &str) -> PageResult {
    let session = open_page(b, url);
    let s = Some(session.as_str());
    // Let late console output and image decodes arrive.
    b.call(
        s,
        "Runtime.evaluate",
        json!({"expression": "new Promise(r => setTimeout(r, 300))", "awaitPromise": true}),
    );
    let shot = b.call(s, "Page.captureScreenshot", json!({"format": "png"}));
    let screenshot = base64::engine::general_purpose::STANDARD
        .decode(shot["data"].as_str().unwrap())
        .unwrap();
    b.call(
        None,
        "Target.detachFromTarget",
        json!({"sessionId": session}),
    );
    let mut problems = Vec::new();
    for e in &b.events {
        let p = &e["params"];
        match e["method"].as_str() {
            Some("Runtime.consoleAPICalled")
                if matches!(p["type"].as_str(), Some("error" | "warning" | "assert")) =>
            {
                problems.push(format!("console.{}: {}", p["type"], p["args"]));
            }
            Some("Runtime.exceptionThrown") => {
                problems.push(format!("exception: {}", p["exceptionDetails"]));
            }
            Some("Log.entryAdded")
                if matches!(p["entry"]["level"].as_str(), Some("error" | "warning")) =>
            {
                problems.push(format!(
                    "log {}: {} ({})",
                    p["entry"]["level"], p["entry"]["text"], p["entry"]["url"]
                ));
            }
            _ => {}
        }
    }
    PageResult {
        problems,
        screenshot,
    }
}

/// Fraction of pixels that differ from the page background, and the number
/// of distinct colours.
fn ink(png_bytes: &[u8]) -> (f64, usize, (u32, u32)) {
    let decoder = png::Decoder::new(png_bytes);
    let mut reader = decoder.read_info().unwrap();
    let mut buf = vec![0; reader.output_buffer_size()];
    let info = reader.next_frame(&mut buf).unwrap();
    let bytes = &buf[..info.buffer_size()];
    let step = info.color_type.samples();
    let px: Vec<&[u8]> = bytes.chunks(step).map(|c| &c[..3.min(c.len())]).collect();
    let background = px[0];
    let differing = px.iter().filter(|p| **p != background).count();
    let mut colours: Vec<&[u8]> = px.clone();
    colours.sort();
    colours.dedup();
    (
        differing as f64 / px.len() as f64,
        colours.len(),
        (info.width, info.height),
    )
}

/// What the page looks like to the browser's print engine: the computed
/// styles that matter on paper, and the number of pages of its PDF.
/// A4's width inside 0.4-inch margins, CSS px: (210 / 25.4 − 0.8) × 96.
const A4_CONTENT_PX: u32 = 717;

struct Printed {
    styles: Value,
    pages: usize,
}

fn print_page(b: &mut Browser, url: &str) -> Printed {
    let session = open_page(b, url);
    let s = Some(session.as_str());
    b.call(s, "Emulation.setEmulatedMedia", json!({"media": "print"}));
    // The width an A4 page leaves inside the print engine's default
    // margins: 210 mm less 2 × 0.4 in, at 96 CSS px per inch (CSS Values
    // and Units, absolute lengths).
    b.call(
        s,
        "Emulation.setDeviceMetricsOverride",
        json!({"width": A4_CONTENT_PX, "height": 1000, "deviceScaleFactor": 1, "mobile": false}),
    );
    // Everything a reader could press or scroll, and where pages break.
    let probe = r#"JSON.stringify((() => {
        const shown = e => e && getComputedStyle(e).display !== 'none';
        const scrolls = [...document.querySelectorAll('*')].filter(e => {
            const c = getComputedStyle(e);
            return ['auto', 'scroll'].includes(c.overflowX) || ['auto', 'scroll'].includes(c.overflowY);
        }).map(e => e.tagName + '.' + e.className);
        const sections = [...document.querySelectorAll('main > section')];
        return {
            switch_shown: shown(document.querySelector('.switch')),
            checkbox_shown: shown(document.querySelector('#to-scale')),
            nav_shown: shown(document.querySelector('nav')),
            drawings_shown: [...document.querySelectorAll('.xs figure')].filter(shown).length,
            scrolls,
            sections: sections.length,
            width: document.documentElement.scrollWidth,
            widest: [...document.querySelectorAll('main *')]
                .filter(e => e.getBoundingClientRect().right > innerWidth + 1)
                .map(e => e.tagName + '.' + e.className).slice(0, 5),
            breaks: sections.map(e => getComputedStyle(e).breakBefore),
        };
    })())"#;
    let v = b.call(
        s,
        "Runtime.evaluate",
        json!({"expression": probe, "returnByValue": true}),
    );
    let styles: Value = serde_json::from_str(v["result"]["value"].as_str().unwrap()).unwrap();
    let pdf = b.call(s, "Page.printToPDF", json!({"printBackground": true}));
    let pdf = base64::engine::general_purpose::STANDARD
        .decode(pdf["data"].as_str().unwrap())
        .unwrap();
    // Each page is one `/Type /Page` object (ISO 32000-1, 7.7.3.3); the
    // page tree's nodes are `/Type /Pages`.
    let text = String::from_utf8_lossy(&pdf);
    let pages = text.matches("/Type /Page").count() - text.matches("/Type /Pages").count();
    b.call(
        None,
        "Target.detachFromTarget",
        json!({"sessionId": session}),
    );
    Printed { styles, pages }
}

#[test]
fn report_page_renders_in_headless_chromium() {
    let Some(exe) = find_chromium() else {
        if std::env::var("STACKUP_LINT_REQUIRE_BROWSER").as_deref() == Ok("1") {
            panic!("STACKUP_LINT_REQUIRE_BROWSER=1 but no chromium found on PATH");
        }
        eprintln!(
            "skipped: no chromium on PATH (install Debian's `chromium` package, or set STACKUP_LINT_CHROMIUM)"
        );
        return;
    };
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let o = Command::new(env!("CARGO_BIN_EXE_stackup-lint"))
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .env("STACKUP_LINT_CACHE_DIR", dir.path().join("cache"))
        .args(["report", "examples/line-card-10l/board.stackup.yaml", "-o"])
        .arg(&out)
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(0), "{o:?}");

    // The probe: a page with three known faults.
    let probe = dir.path().join("probe.html");
    std::fs::write(
        &probe,
        "<!DOCTYPE html><html><head><meta charset=\"utf-8\"><title>probe</title></head><body>\
         <p>probe</p><img src=\"missing.png\" alt=\"\">\
         <script>console.error('probe-error'); throw new Error('probe-throw');</script></body></html>",
    )
    .unwrap();

    let mut b = Browser::start(&exe);
    let version = b.call(None, "Browser.getVersion", json!({}));
    eprintln!("browser: {}", version["product"]);

    let r = load_page(&mut b, &format!("file://{}", probe.display()));
    let all = r.problems.join("\n");
    assert!(
        all.contains("probe-error"),
        "console.error not caught:\n{all}"
    );
    assert!(all.contains("probe-throw"), "exception not caught:\n{all}");
    assert!(
        all.contains("missing.png"),
        "failed resource not caught:\n{all}"
    );

    let page = out.join("board.html");
    let r = load_page(&mut b, &format!("file://{}", page.display()));
    assert!(
        r.problems.is_empty(),
        "the report page logged problems:\n{}",
        r.problems.join("\n")
    );
    let (fraction, colours, size) = ink(&r.screenshot);
    assert!(size.0 >= 1000 && size.1 >= 1000, "screenshot size {size:?}");
    // A blank or failed page is one flat colour; the report's header band,
    // tables and drawing cover far more than a few percent.
    assert!(
        fraction > 0.10,
        "screenshot nearly blank: {:.1} % of pixels drawn",
        fraction * 100.0
    );
    assert!(colours > 50, "screenshot has only {colours} colours");

    // Printed: no switch, checkbox or navigation, nothing that scrolls, one
    // of the two drawings, and every section after the first on a new page.
    let p = print_page(&mut b, &format!("file://{}", page.display()));
    let st = &p.styles;
    assert_eq!(st["switch_shown"], json!(false), "{st}");
    assert_eq!(st["checkbox_shown"], json!(false), "{st}");
    assert_eq!(st["nav_shown"], json!(false), "{st}");
    assert_eq!(st["drawings_shown"], json!(1), "{st}");
    assert_eq!(st["scrolls"], json!([]), "{st}");
    // Nothing wider than the page: what does not scroll must fit.
    assert!(
        st["width"].as_u64().unwrap() <= u64::from(A4_CONTENT_PX),
        "{st}"
    );
    let sections = st["sections"].as_u64().unwrap() as usize;
    assert!(sections >= 5, "{st}");
    eprintln!("printed: {} pages for {sections} sections", p.pages);
    let breaks = st["breaks"].as_array().unwrap();
    assert!(breaks[1..].iter().all(|b| b == "page"), "{st}");
    assert!(
        p.pages >= sections,
        "{} pages for {sections} sections",
        p.pages
    );
    if let Ok(keep) = std::env::var("STACKUP_LINT_KEEP_SCREENSHOT") {
        std::fs::write(keep, &r.screenshot).unwrap();
    }
    b.call(None, "Browser.close", json!({}));
}
