//! Output plumbing: error type, atomic file writes, CSV tables and staged output sets.
//!
//! Every output of a run is first computed in memory and staged into an
//! [`OutputSet`]; only when all computation has succeeded is the set committed,
//! each file written atomically (temporary file in the same directory, fsync,
//! rename). A run that fails while computing therefore writes nothing.

use std::fmt::Write as _;
use std::fs;
use std::io::Write as _;
use std::path::{Path, PathBuf};

/// Errors raised while preparing or writing output files.
#[derive(Debug, thiserror::Error)]
pub enum ExportError {
    /// An I/O operation on `path` failed.
    #[error("cannot write {}: {source}", path.display())]
    Io {
        /// File or directory involved.
        path: PathBuf,
        /// Underlying I/O error.
        #[source]
        source: std::io::Error,
    },
    /// A value that must be finite was NaN or infinite.
    #[error("non-finite value (NaN or infinity) in {what}; refusing to write it")]
    NonFinite {
        /// The quantity (column, variable, curve …) holding the bad value.
        what: String,
    },
    /// A figure could not be drawn.
    #[error("cannot draw figure: {what}")]
    Plot {
        /// Description of the problem.
        what: String,
    },
    /// Inputs had inconsistent shapes (lengths, row widths, dimension products).
    #[error("shape mismatch: {what}")]
    Shape {
        /// Description of the mismatch.
        what: String,
    },
    /// A required input was empty.
    #[error("nothing to write: {what} is empty")]
    Empty {
        /// The empty quantity.
        what: String,
    },
    /// A name (NetCDF dimension, variable or attribute, CSV column) was invalid.
    #[error("invalid name {name:?}: {why}")]
    InvalidName {
        /// The offending name.
        name: String,
        /// Why it was rejected.
        why: String,
    },
    /// The output would exceed a format limit.
    #[error("format limit exceeded: {what}")]
    TooLarge {
        /// Description of the limit.
        what: String,
    },
}

/// Check that every value is finite; otherwise return [`ExportError::NonFinite`] naming `what`.
pub fn ensure_finite(what: &str, values: &[f64]) -> Result<(), ExportError> {
    if values.iter().all(|v| v.is_finite()) {
        Ok(())
    } else {
        Err(ExportError::NonFinite {
            what: what.to_string(),
        })
    }
}

fn io_err(path: &Path, source: std::io::Error) -> ExportError {
    ExportError::Io {
        path: path.to_path_buf(),
        source,
    }
}

/// Write `bytes` to `path` atomically.
///
/// The data go to a temporary file `.{file}.tmp-{pid}-{n}` in the same directory,
/// which is synced and then renamed over `path`; readers see either the old
/// file or the complete new one. The parent directory is created if missing.
/// On failure the temporary file is removed.
pub fn atomic_write(path: &Path, bytes: &[u8]) -> Result<(), ExportError> {
    let file_name = path.file_name().ok_or_else(|| {
        io_err(
            path,
            std::io::Error::new(std::io::ErrorKind::InvalidInput, "path has no file name"),
        )
    })?;
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    fs::create_dir_all(&dir).map_err(|e| io_err(&dir, e))?;
    let mut tmp_name = std::ffi::OsString::from(".");
    tmp_name.push(file_name);
    // The counter keeps concurrent writers in one process apart.
    static SEQ: std::sync::atomic::AtomicU64 = std::sync::atomic::AtomicU64::new(0);
    let seq = SEQ.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
    tmp_name.push(format!(".tmp-{}-{}", std::process::id(), seq));
    let tmp = dir.join(tmp_name);

    let result = (|| -> Result<(), ExportError> {
        let mut f = fs::File::create(&tmp).map_err(|e| io_err(&tmp, e))?;
        f.write_all(bytes).map_err(|e| io_err(&tmp, e))?;
        f.sync_all().map_err(|e| io_err(&tmp, e))?;
        drop(f);
        fs::rename(&tmp, path).map_err(|e| io_err(path, e))?;
        Ok(())
    })();
    if result.is_err() {
        let _ = fs::remove_file(&tmp);
        return result;
    }
    // Best effort: make the rename itself durable.
    if let Ok(d) = fs::File::open(&dir) {
        let _ = d.sync_all();
    }
    Ok(())
}

/// One cell of a [`Table`].
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    /// A floating-point number, written in shortest round-trip form.
    Num(f64),
    /// An integer.
    Int(i64),
    /// Free text, quoted only if it contains a comma, quote or line break.
    Text(String),
    /// A boolean, written as `true` / `false`.
    Bool(bool),
}

impl From<f64> for Cell {
    fn from(v: f64) -> Self {
        Cell::Num(v)
    }
}
impl From<i64> for Cell {
    fn from(v: i64) -> Self {
        Cell::Int(v)
    }
}
impl From<usize> for Cell {
    fn from(v: usize) -> Self {
        Cell::Int(v as i64)
    }
}
impl From<bool> for Cell {
    fn from(v: bool) -> Self {
        Cell::Bool(v)
    }
}
impl From<&str> for Cell {
    fn from(v: &str) -> Self {
        Cell::Text(v.to_string())
    }
}
impl From<String> for Cell {
    fn from(v: String) -> Self {
        Cell::Text(v)
    }
}

/// A CSV table builder with named columns.
///
/// Rows are checked when the CSV text is produced by [`Table::to_csv`]:
/// a row of the wrong width or a non-finite number is an error.
#[derive(Debug, Clone, Default)]
pub struct Table {
    columns: Vec<String>,
    rows: Vec<Vec<Cell>>,
}

fn csv_text(out: &mut String, s: &str) {
    if s.contains([',', '"', '\n', '\r']) {
        out.push('"');
        for ch in s.chars() {
            if ch == '"' {
                out.push('"');
            }
            out.push(ch);
        }
        out.push('"');
    } else {
        out.push_str(s);
    }
}

impl Table {
    /// A table with the given column names and no rows.
    pub fn new(columns: &[&str]) -> Self {
        Table {
            columns: columns.iter().map(|c| c.to_string()).collect(),
            rows: Vec::new(),
        }
    }

    /// Column names.
    pub fn columns(&self) -> &[String] {
        &self.columns
    }

    /// Number of rows pushed so far.
    pub fn len(&self) -> usize {
        self.rows.len()
    }

    /// Whether the table has no rows.
    pub fn is_empty(&self) -> bool {
        self.rows.is_empty()
    }

    /// Append a row. Its width is checked by [`Table::to_csv`].
    pub fn push_row(&mut self, cells: Vec<Cell>) {
        self.rows.push(cells);
    }

    /// Render as CSV text (header line, then one line per row, `\n` endings).
    ///
    /// Errors: [`ExportError::Shape`] if a row's width differs from the
    /// number of columns, [`ExportError::NonFinite`] naming the column (and
    /// row) if a number is NaN or infinite.
    pub fn to_csv(&self) -> Result<String, ExportError> {
        if self.columns.is_empty() {
            return Err(ExportError::Empty {
                what: "table column list".into(),
            });
        }
        let mut out = String::new();
        for (k, c) in self.columns.iter().enumerate() {
            if k > 0 {
                out.push(',');
            }
            csv_text(&mut out, c);
        }
        out.push('\n');
        for (r, row) in self.rows.iter().enumerate() {
            if row.len() != self.columns.len() {
                return Err(ExportError::Shape {
                    what: format!(
                        "CSV row {} has {} cells but the table has {} columns",
                        r,
                        row.len(),
                        self.columns.len()
                    ),
                });
            }
            for (k, cell) in row.iter().enumerate() {
                if k > 0 {
                    out.push(',');
                }
                match cell {
                    Cell::Num(v) => {
                        if !v.is_finite() {
                            return Err(ExportError::NonFinite {
                                what: format!("column '{}' (row {})", self.columns[k], r),
                            });
                        }
                        // Normalise -0 to 0 for tidiness; `{}` is round-trip exact.
                        let v = if *v == 0.0 { 0.0 } else { *v };
                        let _ = write!(out, "{}", v);
                    }
                    Cell::Int(i) => {
                        let _ = write!(out, "{}", i);
                    }
                    Cell::Text(s) => csv_text(&mut out, s),
                    Cell::Bool(b) => out.push_str(if *b { "true" } else { "false" }),
                }
            }
            out.push('\n');
        }
        Ok(out)
    }
}

/// A set of output files staged in memory and written together by [`OutputSet::commit`].
#[derive(Debug, Default)]
pub struct OutputSet {
    files: Vec<(PathBuf, Vec<u8>)>,
}

impl OutputSet {
    /// An empty set.
    pub fn new() -> Self {
        Self::default()
    }

    /// Stage `bytes` for `path`. Staging the same path again replaces the earlier content.
    pub fn add(&mut self, path: impl Into<PathBuf>, bytes: Vec<u8>) {
        let path = path.into();
        if let Some(slot) = self.files.iter_mut().find(|(p, _)| *p == path) {
            slot.1 = bytes;
        } else {
            self.files.push((path, bytes));
        }
    }

    /// Stage UTF-8 text for `path`.
    pub fn add_text(&mut self, path: impl Into<PathBuf>, text: &str) {
        self.add(path, text.as_bytes().to_vec());
    }

    /// Stage a table rendered as CSV; fails (staging nothing) if the table is invalid.
    pub fn add_table(
        &mut self,
        path: impl Into<PathBuf>,
        table: &Table,
    ) -> Result<(), ExportError> {
        let csv = table.to_csv()?;
        self.add(path, csv.into_bytes());
        Ok(())
    }

    /// Paths staged so far, in staging order.
    pub fn paths(&self) -> Vec<PathBuf> {
        self.files.iter().map(|(p, _)| p.clone()).collect()
    }

    /// Number of staged files.
    pub fn len(&self) -> usize {
        self.files.len()
    }

    /// Whether nothing is staged.
    pub fn is_empty(&self) -> bool {
        self.files.is_empty()
    }

    /// Write every staged file with [`atomic_write`], in staging order.
    ///
    /// Returns the written paths. Stops at the first failure; files written
    /// before it stay (each one complete).
    pub fn commit(self) -> Result<Vec<PathBuf>, ExportError> {
        let mut written = Vec::with_capacity(self.files.len());
        for (path, bytes) in self.files {
            atomic_write(&path, &bytes)?;
            written.push(path);
        }
        Ok(written)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn scratch(name: &str) -> PathBuf {
        let d = std::env::temp_dir().join(format!(
            "icefold-export-test-{}-{}",
            name,
            std::process::id()
        ));
        let _ = fs::remove_dir_all(&d);
        d
    }

    #[test]
    fn atomic_write_creates_replaces_and_leaves_no_temp() {
        let dir = scratch("atomic");
        let target = dir.join("sub").join("out.txt");
        atomic_write(&target, b"first").unwrap();
        assert_eq!(fs::read(&target).unwrap(), b"first");
        atomic_write(&target, b"second").unwrap();
        assert_eq!(fs::read(&target).unwrap(), b"second");
        let names: Vec<_> = fs::read_dir(target.parent().unwrap())
            .unwrap()
            .map(|e| e.unwrap().file_name().into_string().unwrap())
            .collect();
        assert_eq!(names, vec!["out.txt".to_string()]);
        fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn atomic_write_failure_cleans_up() {
        let dir = scratch("atomicfail");
        // Target is an existing non-empty directory: rename must fail.
        let target = dir.join("blocker");
        fs::create_dir_all(target.join("inner")).unwrap();
        let err = atomic_write(&target, b"x").unwrap_err();
        assert!(matches!(err, ExportError::Io { .. }));
        let names: Vec<_> = fs::read_dir(&dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().into_string().unwrap())
            .collect();
        assert_eq!(names, vec!["blocker".to_string()]);
        fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn csv_quoting_and_numbers() {
        let mut t = Table::new(&["name", "value", "n", "stable"]);
        t.push_row(vec![
            Cell::Text("a,b".into()),
            Cell::Num(0.1),
            Cell::Int(-3),
            Cell::Bool(true),
        ]);
        t.push_row(vec![
            Cell::Text("say \"hi\"".into()),
            Cell::Num(12.0),
            Cell::Int(0),
            Cell::Bool(false),
        ]);
        t.push_row(vec![
            "line\nbreak".into(),
            (-0.0).into(),
            7usize.into(),
            "plain".into(),
        ]);
        let csv = t.to_csv().unwrap();
        assert_eq!(
            csv,
            "name,value,n,stable\n\"a,b\",0.1,-3,true\n\"say \"\"hi\"\"\",12,0,false\n\"line\nbreak\",0,7,plain\n"
        );
        // Round trip of an awkward float.
        let x = 1.0 / 3.0;
        let mut t = Table::new(&["x"]);
        t.push_row(vec![Cell::Num(x)]);
        let csv = t.to_csv().unwrap();
        let back: f64 = csv.lines().nth(1).unwrap().parse().unwrap();
        assert_eq!(back, x);
    }

    #[test]
    fn csv_rejects_nan_and_bad_width() {
        let mut t = Table::new(&["lat", "temp_c"]);
        t.push_row(vec![Cell::Num(10.0), Cell::Num(f64::NAN)]);
        match t.to_csv() {
            Err(ExportError::NonFinite { what }) => assert!(what.contains("temp_c")),
            other => panic!("expected NonFinite, got {other:?}"),
        }
        let mut t = Table::new(&["lat", "temp_c"]);
        t.push_row(vec![Cell::Num(f64::INFINITY), Cell::Num(1.0)]);
        assert!(matches!(t.to_csv(), Err(ExportError::NonFinite { .. })));
        let mut t = Table::new(&["a", "b"]);
        t.push_row(vec![Cell::Int(1)]);
        assert!(matches!(t.to_csv(), Err(ExportError::Shape { .. })));
    }

    #[test]
    fn output_set_commits_all() {
        let dir = scratch("outset");
        let mut set = OutputSet::new();
        set.add(dir.join("a.bin"), vec![1, 2, 3]);
        set.add_text(dir.join("b.txt"), "hello");
        let mut t = Table::new(&["x"]);
        t.push_row(vec![Cell::Num(f64::NAN)]);
        assert!(set.add_table(dir.join("c.csv"), &t).is_err());
        assert_eq!(set.len(), 2);
        assert!(!dir.exists(), "staging must not touch the disk");
        let written = set.commit().unwrap();
        assert_eq!(written.len(), 2);
        assert_eq!(fs::read(dir.join("a.bin")).unwrap(), vec![1, 2, 3]);
        assert_eq!(fs::read_to_string(dir.join("b.txt")).unwrap(), "hello");
        fs::remove_dir_all(&dir).unwrap();
    }
}
