//! Output formats: one enum, one small table type, and whole-or-nothing file writing.
//!
//! Every verb builds either a [`TextTable`] (rows of already formatted cells) or a serialisable result
//! struct, and hands it to [`TextTable::render`] or `serde_json`. Numbers are formatted by [`fmt_num`],
//! which never prints `NaN` or `inf` (a non-finite value is written as an empty cell / JSON `null`).

use std::io::Write;
use std::path::{Path, PathBuf};

use serde::Serialize;
use tabled::builder::Builder;
use tabled::settings::Style;

/// The output formats every verb offers.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Format {
    /// A boxed plain-text table for the terminal.
    Table,
    /// A GitHub-flavoured Markdown table (pastes into briefings).
    Markdown,
    /// Comma-separated values with one header row.
    Csv,
    /// JSON (the structure is documented per verb).
    Json,
}

impl std::str::FromStr for Format {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s {
            "table" => Ok(Format::Table),
            "markdown" | "md" => Ok(Format::Markdown),
            "csv" => Ok(Format::Csv),
            "json" => Ok(Format::Json),
            other => Err(format!(
                "unknown format `{other}`: allowed are table, markdown, csv, json"
            )),
        }
    }
}

/// A table of formatted cells with one header row.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct TextTable {
    /// Column names (CSV headers).
    pub headers: Vec<String>,
    /// Rows of cells, each as long as `headers`.
    pub rows: Vec<Vec<String>>,
}

impl TextTable {
    /// An empty table with these column names.
    pub fn new<S: AsRef<str>>(headers: &[S]) -> Self {
        TextTable {
            headers: headers.iter().map(|h| h.as_ref().to_string()).collect(),
            rows: Vec::new(),
        }
    }

    /// Appends one row.
    pub fn push(&mut self, row: Vec<String>) {
        self.rows.push(row);
    }

    /// Renders as table, Markdown or CSV. JSON is not a table format: callers serialise their result
    /// struct instead; asked for JSON, this renders the rows as an array of objects keyed by header.
    pub fn render(&self, format: Format) -> String {
        match format {
            Format::Table => {
                let mut b = Builder::default();
                b.push_record(self.headers.clone());
                for r in &self.rows {
                    b.push_record(r.clone());
                }
                let mut t = b.build();
                t.with(Style::rounded());
                format!("{t}\n")
            }
            Format::Markdown => {
                let mut s = String::new();
                s.push_str(&markdown_row(&self.headers));
                s.push_str(&markdown_row(
                    &self
                        .headers
                        .iter()
                        .map(|_| "---".to_string())
                        .collect::<Vec<_>>(),
                ));
                for r in &self.rows {
                    s.push_str(&markdown_row(r));
                }
                s
            }
            Format::Csv => {
                let mut s = String::new();
                s.push_str(&csv_row(&self.headers));
                for r in &self.rows {
                    s.push_str(&csv_row(r));
                }
                s
            }
            Format::Json => {
                let objs: Vec<serde_json::Map<String, serde_json::Value>> = self
                    .rows
                    .iter()
                    .map(|r| {
                        self.headers
                            .iter()
                            .zip(r)
                            .map(|(h, c)| (h.clone(), cell_to_json(c)))
                            .collect()
                    })
                    .collect();
                let mut s = serde_json::to_string_pretty(&objs).unwrap_or_default();
                s.push('\n');
                s
            }
        }
    }
}

fn cell_to_json(c: &str) -> serde_json::Value {
    if c.is_empty() {
        return serde_json::Value::Null;
    }
    match c.parse::<f64>() {
        Ok(v) if v.is_finite() => serde_json::json!(v),
        _ => serde_json::Value::String(c.to_string()),
    }
}

/// One Markdown table row (`| a | b |` and a newline), `|` escaped; for streamed tables.
pub fn markdown_row(cells: &[String]) -> String {
    let inner: Vec<String> = cells.iter().map(|c| c.replace('|', "\\|")).collect();
    format!("| {} |\n", inner.join(" | "))
}

/// One CSV record and a newline, quoted where needed; for streamed tables.
pub fn csv_row(cells: &[String]) -> String {
    let quoted: Vec<String> = cells
        .iter()
        .map(|c| {
            if c.contains([',', '"', '\n']) {
                format!("\"{}\"", c.replace('"', "\"\""))
            } else {
                c.clone()
            }
        })
        .collect();
    format!("{}\n", quoted.join(","))
}

/// Formats a number for tables: up to `digits` decimals, trailing zeros kept for alignment;
/// non-finite values become an empty cell (they must never reach a table as `NaN`/`inf`).
pub fn fmt_num(x: f64, digits: usize) -> String {
    if !x.is_finite() {
        return String::new();
    }
    let s = format!("{x:.digits$}");
    // avoid "-0.000"
    if s.starts_with('-') && s[1..].chars().all(|c| c == '0' || c == '.') {
        s[1..].to_string()
    } else {
        s
    }
}

/// Formats a number with full round-trip precision (CSV and JSON-like exports).
pub fn fmt_full(x: f64) -> String {
    if !x.is_finite() {
        return String::new();
    }
    format!("{x}")
}

/// Writes `contents` to `path` whole or not at all; `-` means standard output. See [`write_streamed`]
/// for what happens to symlinks, devices and FIFOs.
pub fn write_whole(path: &Path, contents: &[u8]) -> std::io::Result<()> {
    write_streamed(path, |w| w.write_all(contents))
}

/// Where a write to a path really goes.
enum Target {
    /// Standard output (`-`).
    Stdout,
    /// A path that exists and is not a regular file (a device, a FIFO, a socket): written in place.
    InPlace(PathBuf),
    /// A regular file or a new path: a temporary file beside it, renamed over it when complete.
    Replace(PathBuf),
}

/// Symlinks followed before giving up (the kernel's own limit is 40).
const MAX_LINKS: usize = 40;

/// Resolves `path`: `-` is stdout; a symlink is followed (to its final target, which is what gets
/// replaced — the link itself is kept); an existing path that is not a regular file is written in
/// place; a directory is an error.
fn resolve(path: &Path) -> std::io::Result<Target> {
    if path.as_os_str() == "-" {
        return Ok(Target::Stdout);
    }
    let mut p = path.to_path_buf();
    for _ in 0..MAX_LINKS {
        let meta = match std::fs::symlink_metadata(&p) {
            Ok(m) => m,
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(Target::Replace(p)),
            Err(e) => return Err(e),
        };
        let kind = meta.file_type();
        if kind.is_symlink() {
            let link = std::fs::read_link(&p)?;
            p = if link.is_absolute() {
                link
            } else {
                p.parent().unwrap_or(Path::new("")).join(link)
            };
            continue;
        }
        if kind.is_dir() {
            return Err(std::io::Error::other("is a directory"));
        }
        return Ok(if kind.is_file() {
            Target::Replace(p)
        } else {
            Target::InPlace(p)
        });
    }
    Err(std::io::Error::other("too many levels of symbolic links"))
}

/// Writes to `path` whole or not at all through `produce`, which writes the contents to the writer it
/// is given (so a long output is streamed, never held in memory). `-` means standard output.
///
/// - A regular file or a new path: the contents go to a hidden temporary file in the same folder
///   (registered so that [`remove_temporaries`] can delete it on SIGINT/SIGTERM), flushed to disk and
///   renamed over the target. If `produce` fails, the target is untouched and the temporary removed.
/// - A symlink is followed: its final target is replaced that way and the link is kept.
/// - An existing path that is not a regular file (`/dev/null`, a FIFO, a socket) is opened and
///   written in place: it is never replaced by a regular file.
pub fn write_streamed(
    path: &Path,
    produce: impl FnOnce(&mut dyn Write) -> std::io::Result<()>,
) -> std::io::Result<()> {
    match resolve(path)? {
        Target::Stdout if capturing() => {
            let mut buf = Vec::new();
            produce(&mut buf)?;
            CAPTURE.with(|c| {
                if let Some(v) = c.borrow_mut().as_mut() {
                    v.extend_from_slice(&buf);
                }
            });
            Ok(())
        }
        Target::Stdout => {
            let mut out = std::io::BufWriter::new(std::io::stdout().lock());
            match produce(&mut out).and_then(|_| out.flush()) {
                Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
                other => other,
            }
        }
        Target::InPlace(p) => {
            let f = std::fs::OpenOptions::new().write(true).open(&p)?;
            let mut w = std::io::BufWriter::new(f);
            produce(&mut w)?;
            w.flush()
        }
        Target::Replace(p) => {
            let tmp = Temporary::create(&p, "")?;
            let result = (|| {
                let mut w = std::io::BufWriter::new(tmp.file()?);
                produce(&mut w)?;
                let f = w.into_inner().map_err(|e| e.into_error())?;
                f.sync_all()
            })();
            match result {
                Ok(()) => tmp.commit(&p),
                Err(e) => Err(e),
            }
        }
    }
}

thread_local! {
    /// Where standard output goes while [`capture_stdout`] runs on this thread.
    static CAPTURE: std::cell::RefCell<Option<Vec<u8>>> = const { std::cell::RefCell::new(None) };
}

fn capturing() -> bool {
    CAPTURE.with(|c| c.borrow().is_some())
}

/// Runs `f` with everything this thread writes to `-` (standard output) through this module
/// collected in a buffer instead, and returns it: lets an in-process caller (a test, a program
/// embedding the command line) see a verb's output without a file. Nests: an inner capture sees only
/// its own output.
pub fn capture_stdout<R>(f: impl FnOnce() -> R) -> (R, Vec<u8>) {
    let outer = CAPTURE.with(|c| c.borrow_mut().replace(Vec::new()));
    let r = f();
    let mine = CAPTURE.with(|c| std::mem::replace(&mut *c.borrow_mut(), outer));
    (r, mine.unwrap_or_default())
}

/// Writes to `path` whole or not at all through `produce`, which must create the file at the path it
/// is given (a library that writes files itself, e.g. the PNG encoder) and is called with the
/// temporary registry locked, so that SIGINT/SIGTERM cannot leave its file behind. The temporary
/// file's name ends in `suffix` (e.g. `.png`, for encoders that pick the format by extension). Symlinks
/// and special files are treated as in [`write_streamed`] (a special file gets a copy of the bytes).
pub fn write_whole_via(
    path: &Path,
    suffix: &str,
    produce: impl FnOnce(&Path) -> std::io::Result<()>,
) -> std::io::Result<()> {
    let target = resolve(path)?;
    let beside = match &target {
        Target::Replace(p) | Target::InPlace(p) => p.clone(),
        Target::Stdout => PathBuf::from("furrow-out"),
    };
    let tmp = Temporary::reserve(&beside, suffix, produce)?;
    match target {
        Target::Replace(p) => tmp.commit(&p),
        Target::InPlace(_) | Target::Stdout => {
            let bytes = std::fs::read(&tmp.path);
            drop(tmp); // removes the temporary
            let bytes = bytes?;
            write_streamed(path, |w| w.write_all(&bytes))
        }
    }
}

/// Temporary files being written right now (removed by [`remove_temporaries`] on a signal).
static TEMPORARIES: std::sync::Mutex<Vec<PathBuf>> = std::sync::Mutex::new(Vec::new());
/// Set once [`remove_temporaries`] ran: no new temporary file is created after it.
static TERMINATING: std::sync::atomic::AtomicBool = std::sync::atomic::AtomicBool::new(false);
/// Distinguishes the temporaries of one process.
static COUNTER: std::sync::atomic::AtomicU64 = std::sync::atomic::AtomicU64::new(0);

fn registry() -> std::sync::MutexGuard<'static, Vec<PathBuf>> {
    TEMPORARIES.lock().unwrap_or_else(|e| e.into_inner())
}

/// Deletes every temporary file this process is writing and refuses new ones. The binary calls this
/// from its SIGINT/SIGTERM handler before it exits, so an interrupted run leaves no debris; an output
/// file is then either the complete old one or the complete new one. Returns how many it removed.
pub fn remove_temporaries() -> usize {
    let mut live = registry();
    TERMINATING.store(true, std::sync::atomic::Ordering::SeqCst);
    live.drain(..)
        .filter(|p| std::fs::remove_file(p).is_ok())
        .count()
}

/// Paths of the temporary files being written right now (for tests and diagnostics).
pub fn live_temporaries() -> Vec<PathBuf> {
    registry().clone()
}

/// A registered temporary file beside a target; removed on drop unless committed.
struct Temporary {
    path: PathBuf,
    committed: bool,
}

impl Temporary {
    fn name_beside(target: &Path, suffix: &str) -> PathBuf {
        let dir = match target.parent() {
            Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
            _ => PathBuf::from("."),
        };
        let name = target
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_else(|| "out".into());
        let n = COUNTER.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
        dir.join(format!(
            ".{name}.furrow-tmp-{}-{n}{suffix}",
            std::process::id()
        ))
    }

    fn refused() -> std::io::Error {
        std::io::Error::new(std::io::ErrorKind::Interrupted, "furrow is shutting down")
    }

    /// Creates an empty temporary file beside `target` (created and registered under the lock).
    fn create(target: &Path, suffix: &str) -> std::io::Result<Temporary> {
        Temporary::reserve(target, suffix, |p| {
            std::fs::OpenOptions::new()
                .write(true)
                .create_new(true)
                .open(p)
                .map(|_| ())
        })
    }

    /// Registers a temporary name beside `target` and lets `produce` create it, under the lock.
    fn reserve(
        target: &Path,
        suffix: &str,
        produce: impl FnOnce(&Path) -> std::io::Result<()>,
    ) -> std::io::Result<Temporary> {
        let path = Temporary::name_beside(target, suffix);
        // registered and created under the lock: once the signal handler has run
        // [`remove_temporaries`], no temporary file can appear any more
        let mut live = registry();
        if TERMINATING.load(std::sync::atomic::Ordering::SeqCst) {
            return Err(Temporary::refused());
        }
        live.push(path.clone());
        let tmp = Temporary {
            path,
            committed: false,
        };
        let made = produce(&tmp.path);
        drop(live);
        made.map(|_| tmp)
    }

    fn file(&self) -> std::io::Result<std::fs::File> {
        std::fs::OpenOptions::new().write(true).open(&self.path)
    }

    /// Renames the temporary over `target` (keeping an existing target's permissions).
    fn commit(mut self, target: &Path) -> std::io::Result<()> {
        if let Ok(meta) = std::fs::metadata(target) {
            let _ = std::fs::set_permissions(&self.path, meta.permissions());
        }
        let mut live = registry();
        if TERMINATING.load(std::sync::atomic::Ordering::SeqCst) {
            return Err(Temporary::refused());
        }
        std::fs::rename(&self.path, target)?;
        live.retain(|p| p != &self.path);
        self.committed = true;
        Ok(())
    }
}

impl Drop for Temporary {
    fn drop(&mut self) {
        if !self.committed {
            let _ = std::fs::remove_file(&self.path);
            registry().retain(|p| p != &self.path);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn csv_quotes_commas_and_quotes() {
        let mut t = TextTable::new(&["a", "b"]);
        t.push(vec!["x,y".into(), "say \"hi\"".into()]);
        assert_eq!(t.render(Format::Csv), "a,b\n\"x,y\",\"say \"\"hi\"\"\"\n");
    }

    #[test]
    fn non_finite_numbers_become_empty_cells() {
        assert_eq!(fmt_num(f64::NAN, 2), "");
        assert_eq!(fmt_num(f64::INFINITY, 2), "");
        assert_eq!(fmt_num(-0.0001, 2), "0.00");
        assert_eq!(fmt_num(1.5, 2), "1.50");
    }

    #[test]
    fn markdown_has_separator_row() {
        let mut t = TextTable::new(&["k", "v"]);
        t.push(vec!["a".into(), "1".into()]);
        assert_eq!(
            t.render(Format::Markdown),
            "| k | v |\n| --- | --- |\n| a | 1 |\n"
        );
    }

    #[test]
    fn write_whole_replaces_file() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("o.csv");
        write_whole(&p, b"first").unwrap();
        write_whole(&p, b"second").unwrap();
        assert_eq!(std::fs::read_to_string(&p).unwrap(), "second");
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
    }
}
