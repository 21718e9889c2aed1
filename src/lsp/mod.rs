//! `stackup-lint lsp`: a language server over standard input and output.
//!
//! Built on `lsp-server` (the message loop and JSON-RPC framing the
//! rust-analyzer project maintains; synchronous, no async runtime) and
//! `lsp-types` (the protocol's types). The main thread answers the editor;
//! one worker thread checks documents. After an edit the worker waits a
//! moment for the typing to settle (debounce), loads the text (schema,
//! units, references: input errors are published at once), then analyses
//! it (the field solves, through the same disk cache as `check`) and
//! publishes every finding. A job superseded by a newer version of its
//! document is dropped between those stages, and its results are never
//! published: a slow solve never blocks typing nor shows stale findings.
//! Hover, go to definition and quick fixes read the last analysed
//! snapshot; completion reads the text as typed.

pub mod convert;
pub mod features;

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};
use std::time::Duration;

use crossbeam_channel::{Receiver, Sender};
use lsp_server::{Connection, ErrorCode, Message, Notification, Request, Response};
use lsp_types::notification::{
    DidChangeTextDocument, DidCloseTextDocument, DidOpenTextDocument, DidSaveTextDocument,
    Notification as _, PublishDiagnostics,
};
use lsp_types::request::{
    CodeActionRequest, Completion, GotoDefinition, HoverRequest, Request as _,
};
use lsp_types::{
    CodeAction, CodeActionKind, CodeActionOrCommand, CodeActionParams,
    CodeActionProviderCapability, CompletionItem, CompletionItemKind, CompletionOptions,
    CompletionParams, CompletionResponse, Documentation, GotoDefinitionParams,
    GotoDefinitionResponse, Hover, HoverContents, HoverParams, HoverProviderCapability,
    InitializeParams, InitializeResult, Location, MarkupContent, MarkupKind, OneOf,
    PositionEncodingKind, PublishDiagnosticsParams, ServerCapabilities, ServerInfo,
    TextDocumentSyncCapability, TextDocumentSyncKind, TextEdit, Uri, WorkspaceEdit,
};

use crate::analysis::AnalysisOptions;
use crate::files::Confinement;
use crate::load::{self, InputLimits};
use convert::{offset, range, uri_to_path, Encoding};
use features::Snapshot;

/// How long the worker waits after an edit for the next one.
const DEBOUNCE: Duration = Duration::from_millis(150);

/// What the server needs from the command line.
pub struct ServerOptions {
    pub analysis: AnalysisOptions,
    pub root: Option<PathBuf>,
    pub limits: InputLimits,
    pub docs_url: String,
}

/// Serve on standard input and output until the editor says `exit`.
pub fn run(opts: ServerOptions) -> Result<(), String> {
    let (connection, io) = Connection::stdio();
    serve(connection, opts)?;
    io.join().map_err(|e| e.to_string())
}

/// Serve on `connection` (stdio, or memory in tests).
pub fn serve(connection: Connection, opts: ServerOptions) -> Result<(), String> {
    let (id, params) = connection.initialize_start().map_err(|e| e.to_string())?;
    let params: InitializeParams = serde_json::from_value(params).map_err(|e| e.to_string())?;
    // UTF-8 positions when the client offers them (LSP 3.17), else the
    // protocol's default UTF-16.
    let utf8 = params
        .capabilities
        .general
        .as_ref()
        .and_then(|g| g.position_encodings.as_ref())
        .is_some_and(|v| v.contains(&PositionEncodingKind::UTF8));
    let enc = if utf8 {
        Encoding::Utf8
    } else {
        Encoding::Utf16
    };
    let capabilities = ServerCapabilities {
        position_encoding: Some(if utf8 {
            PositionEncodingKind::UTF8
        } else {
            PositionEncodingKind::UTF16
        }),
        text_document_sync: Some(TextDocumentSyncCapability::Kind(TextDocumentSyncKind::FULL)),
        hover_provider: Some(HoverProviderCapability::Simple(true)),
        completion_provider: Some(CompletionOptions {
            trigger_characters: Some(vec![":".into(), " ".into()]),
            ..Default::default()
        }),
        definition_provider: Some(OneOf::Left(true)),
        code_action_provider: Some(CodeActionProviderCapability::Simple(true)),
        ..Default::default()
    };
    let result = InitializeResult {
        capabilities,
        server_info: Some(ServerInfo {
            name: "stackup-lint".into(),
            version: Some(env!("CARGO_PKG_VERSION").into()),
        }),
    };
    connection
        .initialize_finish(id, serde_json::to_value(result).map_err(|e| e.to_string())?)
        .map_err(|e| e.to_string())?;

    let shared = Arc::new(Shared::default());
    let (jobs, job_rx) = crossbeam_channel::unbounded::<Job>();
    let worker = {
        let shared = Arc::clone(&shared);
        let sender = connection.sender.clone();
        let docs_url = opts.docs_url.clone();
        std::thread::Builder::new()
            .name("stackup-lint-check".into())
            .spawn(move || worker_loop(job_rx, sender, shared, opts, enc, docs_url))
            .map_err(|e| e.to_string())?
    };
    let mut server = Server {
        connection: &connection,
        docs: HashMap::new(),
        shared,
        jobs,
        enc,
        generation: 0,
    };
    let result = server.main_loop();
    drop(server);
    let _ = worker.join();
    result
}

/// What the main thread and the worker share.
#[derive(Default)]
struct Shared {
    /// The newest job per document URI: older ones are dropped.
    latest: Mutex<HashMap<String, u64>>,
    /// The last analysed snapshot per document URI.
    snapshots: Mutex<HashMap<String, Arc<Snapshot>>>,
}

impl Shared {
    fn current(&self, uri: &str, generation: u64) -> bool {
        self.latest
            .lock()
            .map(|l| l.get(uri) == Some(&generation))
            .unwrap_or(false)
    }

    fn snapshot(&self, uri: &str) -> Option<Arc<Snapshot>> {
        self.snapshots.lock().ok()?.get(uri).cloned()
    }
}

/// One document to check.
struct Job {
    uri: Uri,
    path: PathBuf,
    text: String,
    version: i32,
    generation: u64,
}

struct Doc {
    text: String,
    version: i32,
}

struct Server<'c> {
    connection: &'c Connection,
    docs: HashMap<String, Doc>,
    shared: Arc<Shared>,
    jobs: Sender<Job>,
    enc: Encoding,
    generation: u64,
}

impl Server<'_> {
    fn main_loop(&mut self) -> Result<(), String> {
        while let Ok(msg) = self.connection.receiver.recv() {
            match msg {
                Message::Request(req) => {
                    if self
                        .connection
                        .handle_shutdown(&req)
                        .map_err(|e| e.to_string())?
                    {
                        return Ok(());
                    }
                    let resp = self.request(req);
                    self.send(resp.into());
                }
                Message::Notification(n) => self.notification(n),
                Message::Response(_) => {}
            }
        }
        Ok(())
    }

    fn send(&self, msg: Message) {
        let _ = self.connection.sender.send(msg);
    }

    fn notification(&mut self, n: Notification) {
        match n.method.as_str() {
            DidOpenTextDocument::METHOD => {
                if let Ok(p) =
                    serde_json::from_value::<lsp_types::DidOpenTextDocumentParams>(n.params)
                {
                    let d = p.text_document;
                    self.update(d.uri, d.text, d.version);
                }
            }
            DidChangeTextDocument::METHOD => {
                if let Ok(p) =
                    serde_json::from_value::<lsp_types::DidChangeTextDocumentParams>(n.params)
                {
                    // Full synchronisation: the last change is the text.
                    if let Some(c) = p.content_changes.into_iter().last() {
                        self.update(p.text_document.uri, c.text, p.text_document.version);
                    }
                }
            }
            DidSaveTextDocument::METHOD => {
                // Libraries or coupons beside it may have changed: check again.
                if let Ok(p) =
                    serde_json::from_value::<lsp_types::DidSaveTextDocumentParams>(n.params)
                {
                    let uri = p.text_document.uri;
                    if let Some(d) = self.docs.get(uri.as_str()) {
                        let (text, version) = (d.text.clone(), d.version);
                        self.update(uri, text, version);
                    }
                }
            }
            DidCloseTextDocument::METHOD => {
                if let Ok(p) =
                    serde_json::from_value::<lsp_types::DidCloseTextDocumentParams>(n.params)
                {
                    let key = p.text_document.uri.as_str().to_string();
                    self.docs.remove(&key);
                    if let Ok(mut l) = self.shared.latest.lock() {
                        l.remove(&key);
                    }
                    if let Ok(mut s) = self.shared.snapshots.lock() {
                        s.remove(&key);
                    }
                    publish(
                        &self.connection.sender,
                        p.text_document.uri,
                        Vec::new(),
                        None,
                    );
                }
            }
            _ => {}
        }
    }

    /// A document's new text: remember it and queue a check.
    fn update(&mut self, uri: Uri, text: String, version: i32) {
        let key = uri.as_str().to_string();
        self.docs.insert(
            key.clone(),
            Doc {
                text: text.clone(),
                version,
            },
        );
        let Some(path) = uri_to_path(&uri) else {
            return;
        };
        self.generation += 1;
        if let Ok(mut l) = self.shared.latest.lock() {
            l.insert(key, self.generation);
        }
        let _ = self.jobs.send(Job {
            uri,
            path,
            text,
            version,
            generation: self.generation,
        });
    }

    fn request(&self, req: Request) -> Response {
        let id = req.id.clone();
        let result = match req.method.as_str() {
            HoverRequest::METHOD => parse::<HoverParams>(req.params).map(|p| {
                let tdp = p.text_document_position_params;
                serde_json::to_value(self.hover(&tdp.text_document.uri, tdp.position))
                    .unwrap_or_default()
            }),
            GotoDefinition::METHOD => parse::<GotoDefinitionParams>(req.params).map(|p| {
                let tdp = p.text_document_position_params;
                serde_json::to_value(self.definition(&tdp.text_document.uri, tdp.position))
                    .unwrap_or_default()
            }),
            Completion::METHOD => parse::<CompletionParams>(req.params).map(|p| {
                let tdp = p.text_document_position;
                serde_json::to_value(self.completion(&tdp.text_document.uri, tdp.position))
                    .unwrap_or_default()
            }),
            CodeActionRequest::METHOD => parse::<CodeActionParams>(req.params)
                .map(|p| serde_json::to_value(self.code_actions(&p)).unwrap_or_default()),
            _ => {
                return Response::new_err(
                    id,
                    ErrorCode::MethodNotFound as i32,
                    format!("stackup-lint does not handle `{}`", req.method),
                )
            }
        };
        match result {
            Ok(v) => Response::new_ok(id, v),
            Err(e) => Response::new_err(id, ErrorCode::InvalidParams as i32, e),
        }
    }

    /// The snapshot of `uri` and the byte offset of `pos` in its text.
    fn at(&self, uri: &Uri, pos: lsp_types::Position) -> Option<(Arc<Snapshot>, usize)> {
        let snap = self.shared.snapshot(uri.as_str())?;
        let at = offset(snap.text(), pos, self.enc);
        Some((snap, at))
    }

    fn hover(&self, uri: &Uri, pos: lsp_types::Position) -> Option<Hover> {
        let (snap, at) = self.at(uri, pos)?;
        let value = features::hover(&snap, at)?;
        Some(Hover {
            contents: HoverContents::Markup(MarkupContent {
                kind: MarkupKind::Markdown,
                value,
            }),
            range: None,
        })
    }

    fn definition(&self, uri: &Uri, pos: lsp_types::Position) -> Option<GotoDefinitionResponse> {
        let (snap, at) = self.at(uri, pos)?;
        let (file, span) = features::definition(&snap, at)?;
        let f = snap.db.get(file);
        let target = convert::file_uri(&f.path)?;
        Some(GotoDefinitionResponse::Scalar(Location::new(
            target,
            range(&f.text, &span, self.enc),
        )))
    }

    fn completion(&self, uri: &Uri, pos: lsp_types::Position) -> Option<CompletionResponse> {
        let doc = self.docs.get(uri.as_str())?;
        let at = offset(&doc.text, pos, self.enc);
        let snap = self.shared.snapshot(uri.as_str());
        let items = features::completion(&doc.text, at, snap.as_deref())
            .into_iter()
            .map(|c| CompletionItem {
                label: c.label,
                kind: Some(CompletionItemKind::PROPERTY),
                documentation: (!c.detail.is_empty()).then_some(Documentation::String(c.detail)),
                ..Default::default()
            })
            .collect();
        Some(CompletionResponse::Array(items))
    }

    fn code_actions(&self, p: &CodeActionParams) -> Vec<CodeActionOrCommand> {
        let uri = &p.text_document.uri;
        let Some(snap) = self.shared.snapshot(uri.as_str()) else {
            return Vec::new();
        };
        // Edits are offered only for the text they were computed on.
        if self.docs.get(uri.as_str()).map(|d| d.version) != Some(snap.version) {
            return Vec::new();
        }
        let text = snap.text();
        let r = offset(text, p.range.start, self.enc)..offset(text, p.range.end, self.enc);
        features::fixes_at(&snap, &r)
            .into_iter()
            .filter_map(|f| {
                let fx = f.fix.as_ref()?;
                let edits: Vec<TextEdit> = fx
                    .edits
                    .iter()
                    .filter(|e| e.location.file == snap.file)
                    .map(|e| TextEdit::new(range(text, &e.location.span, self.enc), e.text.clone()))
                    .collect();
                (edits.len() == fx.edits.len()).then(|| {
                    CodeActionOrCommand::CodeAction(CodeAction {
                        title: fx.description.clone(),
                        kind: Some(CodeActionKind::QUICKFIX),
                        edit: Some(WorkspaceEdit {
                            changes: Some(HashMap::from([(uri.clone(), edits)])),
                            ..Default::default()
                        }),
                        ..Default::default()
                    })
                })
            })
            .collect()
    }
}

fn parse<T: serde::de::DeserializeOwned>(v: serde_json::Value) -> Result<T, String> {
    serde_json::from_value(v).map_err(|e| e.to_string())
}

fn publish(
    sender: &Sender<Message>,
    uri: Uri,
    diagnostics: Vec<lsp_types::Diagnostic>,
    version: Option<i32>,
) {
    let params = PublishDiagnosticsParams {
        uri,
        diagnostics,
        version,
    };
    let _ = sender.send(Message::Notification(Notification::new(
        PublishDiagnostics::METHOD.to_string(),
        params,
    )));
}

/// Check jobs as they come: debounce, keep each document's newest job,
/// load (input errors published at once), analyse, publish, keep the
/// snapshot.
fn worker_loop(
    jobs: Receiver<Job>,
    sender: Sender<Message>,
    shared: Arc<Shared>,
    opts: ServerOptions,
    enc: Encoding,
    docs_url: String,
) {
    let cwd = std::env::current_dir().unwrap_or_else(|_| PathBuf::from("."));
    while let Ok(first) = jobs.recv() {
        std::thread::sleep(DEBOUNCE);
        let mut pending: Vec<Job> = vec![first];
        pending.extend(jobs.try_iter());
        // Newest per document, in the order they came.
        let mut newest: Vec<Job> = Vec::new();
        for j in pending {
            newest.retain(|n| n.uri != j.uri);
            newest.push(j);
        }
        for job in newest {
            let key = job.uri.as_str().to_string();
            if !shared.current(&key, job.generation) {
                continue;
            }
            let Some(snap) = check(&job, &opts, &cwd, |snap| {
                // Input errors now; the solve follows.
                if shared.current(&key, job.generation) && !snap.findings.is_empty() {
                    let d =
                        convert::diagnostics(&snap.findings, &snap.db, snap.file, &docs_url, enc);
                    publish(&sender, job.uri.clone(), d, Some(job.version));
                }
                shared.current(&key, job.generation)
            }) else {
                continue;
            };
            if !shared.current(&key, job.generation) {
                continue;
            }
            let d = convert::diagnostics(&snap.findings, &snap.db, snap.file, &docs_url, enc);
            publish(&sender, job.uri.clone(), d, Some(job.version));
            if let Ok(mut s) = shared.snapshots.lock() {
                s.insert(key, Arc::new(snap));
            }
        }
    }
}

/// Load and analyse one document. `loaded` sees the load's snapshot
/// (input errors only) and says whether to go on.
fn check(
    job: &Job,
    opts: &ServerOptions,
    cwd: &Path,
    loaded: impl FnOnce(&Snapshot) -> bool,
) -> Option<Snapshot> {
    let conf = match Confinement::new(opts.root.as_deref(), cwd) {
        Ok(c) => c,
        Err(_) => Confinement::new(None, cwd).ok()?,
    };
    let overlay = HashMap::from([(job.path.clone(), job.text.clone())]);
    let l = load::load_with(
        std::slice::from_ref(&job.path),
        &opts.limits,
        &conf,
        opts.analysis.pool,
        &crate::rules::specs(),
        &overlay,
    );
    let file = l.db.files.iter().position(|f| f.path == job.path)?;
    let first = Snapshot {
        version: job.version,
        db: l.db.clone(),
        file,
        findings: l.problems.clone(),
        model: None,
    };
    if !loaded(&first) || l.stackups.is_empty() {
        return Some(first);
    }
    let (outcome, mut kept) = crate::engine::lint_analysed(l, &opts.analysis);
    Some(Snapshot {
        version: job.version,
        file,
        findings: outcome.findings,
        db: outcome.db,
        model: kept.pop(),
    })
}
