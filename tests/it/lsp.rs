//! `stackup-lint lsp` driven by a JSON-RPC client over the process's
//! standard input and output (Content-Length framing, LSP 3.17): initialize,
//! didOpen, diagnostics, hover, completion, definition, code action,
//! didChange, shutdown and exit.

use std::io::{BufRead, BufReader, Read, Write};
use std::path::Path;
use std::process::{Child, ChildStdin, Command, Stdio};
use std::sync::mpsc;
use std::time::{Duration, Instant};

use serde_json::{json, Value};

use crate::common::{copy_dir, root};

struct Client {
    child: Child,
    stdin: ChildStdin,
    rx: mpsc::Receiver<Value>,
    next_id: i64,
    /// Notifications received while waiting for something else.
    notes: Vec<Value>,
    /// The document versions diagnostics were published for, in order.
    versions: Vec<i64>,
}

/// How long a physics result may take in a debug build on a busy machine.
const SLOW: Duration = Duration::from_secs(300);

impl Client {
    fn start(dir: &Path) -> Client {
        let mut child = Command::new(env!("CARGO_BIN_EXE_stackup-lint"))
            .arg("lsp")
            .current_dir(dir)
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(Stdio::inherit())
            .spawn()
            .expect("the server starts");
        let stdin = child.stdin.take().unwrap();
        let stdout = child.stdout.take().unwrap();
        let (tx, rx) = mpsc::channel();
        std::thread::spawn(move || {
            let mut r = BufReader::new(stdout);
            loop {
                let mut len = None;
                loop {
                    let mut line = String::new();
                    if r.read_line(&mut line).unwrap_or(0) == 0 {
                        return;
                    }
                    let line = line.trim_end();
                    if line.is_empty() {
                        break;
                    }
                    if let Some(v) = line.strip_prefix("Content-Length: ") {
                        len = v.parse::<usize>().ok();
                    }
                }
                let mut body = vec![0; len.expect("a Content-Length header")];
                if r.read_exact(&mut body).is_err() {
                    return;
                }
                let v: Value = serde_json::from_slice(&body).expect("a JSON-RPC message");
                if tx.send(v).is_err() {
                    return;
                }
            }
        });
        Client {
            child,
            stdin,
            rx,
            next_id: 1,
            notes: Vec::new(),
            versions: Vec::new(),
        }
    }

    fn send(&mut self, v: Value) {
        let body = serde_json::to_vec(&v).unwrap();
        write!(self.stdin, "Content-Length: {}\r\n\r\n", body.len()).unwrap();
        self.stdin.write_all(&body).unwrap();
        self.stdin.flush().unwrap();
    }

    fn notify(&mut self, method: &str, params: Value) {
        self.send(json!({"jsonrpc": "2.0", "method": method, "params": params}));
    }

    fn request(&mut self, method: &str, params: Value) -> Value {
        let id = self.next_id;
        self.next_id += 1;
        self.send(json!({"jsonrpc": "2.0", "id": id, "method": method, "params": params}));
        let until = Instant::now() + SLOW;
        loop {
            let v = self
                .rx
                .recv_timeout(until.saturating_duration_since(Instant::now()))
                .unwrap_or_else(|_| panic!("no answer to {method}"));
            if v.get("id") == Some(&json!(id)) {
                assert!(v.get("error").is_none(), "{method}: {v}");
                return v["result"].clone();
            }
            self.notes.push(v);
        }
    }

    /// The next diagnostics published for `uri` that satisfy `want`.
    fn diagnostics(&mut self, uri: &str, want: impl Fn(&[Value]) -> bool) -> Vec<Value> {
        let until = Instant::now() + SLOW;
        let mut seen = Vec::new();
        loop {
            let v = if self.notes.is_empty() {
                match self
                    .rx
                    .recv_timeout(until.saturating_duration_since(Instant::now()))
                {
                    Ok(v) => v,
                    Err(_) => panic!("no diagnostics as wanted; got {seen:#?}"),
                }
            } else {
                self.notes.remove(0)
            };
            if v["method"] == "textDocument/publishDiagnostics" && v["params"]["uri"] == uri {
                self.versions.extend(v["params"]["version"].as_i64());
                let d = v["params"]["diagnostics"]
                    .as_array()
                    .cloned()
                    .unwrap_or_default();
                if want(&d) {
                    return d;
                }
                seen.push(d);
            }
        }
    }
}

/// The `file:` URI of an absolute path made of URI-safe characters.
fn uri_of(p: &Path) -> String {
    let s = p.to_str().unwrap();
    assert!(
        s.bytes()
            .all(|b| b.is_ascii_alphanumeric() || b"/-_.".contains(&b)),
        "{s}"
    );
    format!("file://{s}")
}

/// Line and UTF-16 column of the first `needle` in `text`, plus `skip`
/// characters.
fn pos(text: &str, needle: &str, skip: usize) -> Value {
    let at = text.find(needle).unwrap_or_else(|| panic!("{needle}")) + skip;
    let line = text[..at].matches('\n').count();
    let start = text[..at].rfind('\n').map_or(0, |i| i + 1);
    json!({"line": line, "character": text[start..at].encode_utf16().count()})
}

/// The labels completion offers at `position`.
fn completion_labels(c: &mut Client, uri: &str, position: Value) -> Vec<String> {
    let r = c.request(
        "textDocument/completion",
        json!({"textDocument": {"uri": uri}, "position": position}),
    );
    r.as_array()
        .unwrap()
        .iter()
        .filter_map(|i| i["label"].as_str().map(String::from))
        .collect()
}

/// A scratch copy of the examples directory (kept while the guard lives)
/// and its canonical path.
fn examples_copy() -> (tempfile::TempDir, std::path::PathBuf) {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().canonicalize().unwrap();
    copy_dir(&root().join("examples"), &dir);
    (tmp, dir)
}

fn codes(d: &[Value]) -> Vec<&str> {
    d.iter().filter_map(|x| x["code"].as_str()).collect()
}

#[test]
fn language_server_over_json_rpc() {
    let (_tmp, dir) = examples_copy();
    let board = dir.join("line-card-10l/board.stackup.yaml");
    let uri = uri_of(&board);
    let text = std::fs::read_to_string(&board).unwrap();

    let mut c = Client::start(&dir);
    let init = c.request(
        "initialize",
        json!({"processId": null, "rootUri": uri_of(&dir), "capabilities": {}}),
    );
    let caps = &init["capabilities"];
    assert_eq!(caps["positionEncoding"], "utf-16");
    for cap in [
        "hoverProvider",
        "completionProvider",
        "definitionProvider",
        "codeActionProvider",
    ] {
        assert!(!caps[cap].is_null(), "{cap}: {init}");
    }
    c.notify("initialized", json!({}));
    c.notify(
        "textDocument/didOpen",
        json!({"textDocument": {"uri": uri, "languageId": "yaml", "version": 1, "text": text}}),
    );

    // The same findings as `check`, with ranges, severities, codes, links.
    let d = c.diagnostics(&uri, |d| codes(d).contains(&"impedance-off-target"));
    let check = crate::common::run_in(
        &dir,
        &[
            "check",
            "line-card-10l/board.stackup.yaml",
            "--format",
            "json",
        ],
    )
    .1;
    let check: Value = serde_json::from_str(&check).unwrap();
    let unsuppressed = check["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["suppressed"].is_null() || f["suppressed"] == false)
        .count();
    assert_eq!(d.len(), unsuppressed, "{:#?}", codes(&d));
    let off = d
        .iter()
        .find(|x| x["code"] == "impedance-off-target")
        .unwrap();
    assert_eq!(off["severity"], 1);
    assert!(off["codeDescription"]["href"]
        .as_str()
        .unwrap()
        .ends_with("rules/impedance-off-target.md"));
    // At the line and column `check` gives (1-based there).
    let f = check["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["rule"] == "impedance-off-target")
        .unwrap();
    assert_eq!(
        off["range"]["start"]["line"],
        f["line"].as_i64().unwrap() - 1
    );
    assert_eq!(
        off["range"]["start"]["character"],
        f["column"].as_i64().unwrap() - 1
    );

    // Hover: a pair's solved numbers, a unit value, a ply's Dk.
    let h = c.request(
        "textDocument/hover",
        json!({"textDocument": {"uri": uri}, "position": pos(&text, "  - name: host-56g-pam4", 12)}),
    );
    let v = h["contents"]["value"].as_str().unwrap();
    for want in [
        "net class `host-56g-pam4`",
        "Z_diff",
        "Z_odd",
        "Z_even",
        "Z_common",
        "εeff",
        "ps/mm",
        "dB/m",
        "width for target",
    ] {
        assert!(v.contains(want), "{want}: {v}");
    }
    let h = c.request(
        "textDocument/hover",
        json!({"textDocument": {"uri": uri}, "position": pos(&text, "width: 0.195 mm", 8)}),
    );
    let v = h["contents"]["value"].as_str().unwrap();
    assert!(v.contains("195.00 µm") && v.contains("7.677 mil"), "{v}");
    let h = c.request(
        "textDocument/hover",
        json!({"textDocument": {"uri": uri}, "position": pos(&text, "  - name: pp1", 10)}),
    );
    let v = h["contents"]["value"].as_str().unwrap();
    assert!(v.contains("bulk Dk") && v.contains("apparent Dk"), "{v}");

    // Completion: names after `material:`, schema keys in a net class.
    let labels = completion_labels(
        &mut c,
        &uri,
        pos(&text, "material: low-loss-prepreg, thickness: 0.10 mm}", 10),
    );
    assert!(
        labels.iter().any(|l| l == "low-loss-prepreg")
            && labels.iter().any(|l| l == "low-loss-core"),
        "{labels:?}"
    );
    let labels = completion_labels(&mut c, &uri, pos(&text, "    width: 0.195 mm", 4));
    for want in ["spacing", "impedance", "max-frequency"] {
        assert!(labels.iter().any(|l| l == want), "{want}: {labels:?}");
    }

    // Go to definition: a material in the file, one in a library file.
    let r = c.request(
        "textDocument/definition",
        json!({"textDocument": {"uri": uri}, "position": pos(&text, "material: low-loss-prepreg", 12)}),
    );
    assert_eq!(r["uri"], uri.as_str());
    assert_eq!(r["range"]["start"], pos(&text, "  low-loss-prepreg:", 2));

    // A quick fix: the solved width.
    let r = c.request(
        "textDocument/codeAction",
        json!({"textDocument": {"uri": uri}, "range": {"start": pos(&text, "    width: 0.195 mm", 11), "end": pos(&text, "    width: 0.195 mm", 11)}, "context": {"diagnostics": []}}),
    );
    let action = r
        .as_array()
        .unwrap()
        .iter()
        .find(|a| {
            a["title"]
                .as_str()
                .unwrap_or_default()
                .contains("host-56g-pam4")
        })
        .unwrap_or_else(|| panic!("{r:#}"));
    assert_eq!(action["kind"], "quickfix");
    let edit = &action["edit"]["changes"][uri.as_str()][0];
    assert_eq!(edit["newText"], "0.1709 mm");
    assert_eq!(
        edit["range"]["start"],
        pos(&text, "    width: 0.195 mm", 11)
    );

    // An edit that breaks a unit: an input error at the value.
    let broken = text.replacen("    width: 0.195 mm", "    width: 0.195 furlong", 1);
    c.notify(
        "textDocument/didChange",
        json!({"textDocument": {"uri": uri, "version": 2}, "contentChanges": [{"text": broken}]}),
    );
    let d = c.diagnostics(&uri, |d| d.iter().any(|x| x["code"] == "invalid-input"));
    let bad = d.iter().find(|x| x["code"] == "invalid-input").unwrap();
    assert!(
        bad["message"]
            .as_str()
            .unwrap()
            .contains("unknown unit `furlong`"),
        "{bad}"
    );
    assert_eq!(bad["range"]["start"], pos(&broken, "0.195 furlong", 0));

    // Two edits in quick succession: only the newer is checked and
    // published; the older one's results never reach the editor.
    let v4 = text.replacen("    spacing: 0.15 mm", "    spacing: 0.15 parsec", 1);
    c.notify(
        "textDocument/didChange",
        json!({"textDocument": {"uri": uri, "version": 3}, "contentChanges": [{"text": text}]}),
    );
    c.notify(
        "textDocument/didChange",
        json!({"textDocument": {"uri": uri, "version": 4}, "contentChanges": [{"text": v4}]}),
    );
    let d = c.diagnostics(&uri, |d| {
        d.iter()
            .any(|x| x["message"].as_str().unwrap_or_default().contains("parsec"))
    });
    assert!(!d.iter().any(|x| x["message"]
        .as_str()
        .unwrap_or_default()
        .contains("furlong")));
    assert!(!c.versions.contains(&3), "{:?}", c.versions);
    assert_eq!(c.versions.last(), Some(&4));

    // Clean shutdown.
    let r = c.request("shutdown", Value::Null);
    assert!(r.is_null());
    c.notify("exit", Value::Null);
    let until = Instant::now() + Duration::from_secs(30);
    let status = loop {
        if let Some(s) = c.child.try_wait().unwrap() {
            break s;
        }
        assert!(Instant::now() < until, "the server did not exit");
        std::thread::sleep(Duration::from_millis(20));
    };
    assert!(status.success(), "{status}");
}

/// A material from a library file: go to definition opens the library.
#[test]
fn definition_reaches_into_a_library_file() {
    let (_tmp, dir) = examples_copy();
    let board = dir.join("radar-sensor-6l/board.stackup.yaml");
    let uri = uri_of(&board);
    let text = std::fs::read_to_string(&board).unwrap();
    let lib = dir.join("materials/demo-generic.materials.yaml");
    let lib_text = std::fs::read_to_string(&lib).unwrap();

    let mut c = Client::start(&dir);
    c.request("initialize", json!({"processId": null, "capabilities": {"general": {"positionEncodings": ["utf-8", "utf-16"]}}}));
    c.notify("initialized", json!({}));
    c.notify(
        "textDocument/didOpen",
        json!({"textDocument": {"uri": uri, "languageId": "yaml", "version": 1, "text": text}}),
    );
    // The radar board is clean: one empty publication once solved.
    let d = c.diagnostics(&uri, |_| true);
    assert!(d.is_empty(), "{d:#?}");
    let r = c.request(
        "textDocument/definition",
        json!({"textDocument": {"uri": uri}, "position": pos(&text, "material: ptfe-ceramic-3.15", 12)}),
    );
    assert_eq!(r["uri"], uri_of(&lib));
    assert_eq!(
        r["range"]["start"],
        pos(&lib_text, "  ptfe-ceramic-3.15:", 2)
    );
    c.request("shutdown", Value::Null);
    c.notify("exit", Value::Null);
    let _ = c.child.wait();
}
