//! Output plumbing: error type, atomic file writes, CSV tables and staged output sets.
//!
//! Every output of a run is first computed in memory and staged into an
//! [`OutputSet`]; only when all computation has succeeded is the set
//! committed: every file is written in full into a temporary file beside its
//! destination (created new, with an unpredictable name) and synced, NetCDF
//! files written there directly by [`crate::io::netcdf`]; only when all of
//! them are complete are they renamed into place. A run that fails while
//! computing, or while writing the temporary files, therefore writes nothing
//! and leaves no temporary file behind.

use crate::io::netcdf::NcFile;
use std::fs;
use std::io::Write as _;
use std::path::{Path, PathBuf};
use tempfile::NamedTempFile;

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
    /// The output directory cannot be used as asked (empty, not a
    /// directory, holding files icefold did not write, busy): bad input,
    /// exit 2; nothing is written.
    #[error("{what}")]
    Refused {
        /// What is wrong, naming the directory.
        what: String,
    },
    /// The output would exceed a format limit.
    #[error("format limit exceeded: {what}")]
    TooLarge {
        /// Description of the limit.
        what: String,
    },
    /// The NetCDF library refused a definition or failed to write it.
    #[error("NetCDF: {what}")]
    NetCdf {
        /// What netcdf3 reported.
        what: String,
    },
    /// The CSV writer failed.
    #[error("CSV: {what}")]
    Csv {
        /// What the csv crate reported.
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

/// [`ExportError::Io`] for `path`.
pub(crate) fn io_err(path: &Path, source: std::io::Error) -> ExportError {
    ExportError::Io {
        path: path.to_path_buf(),
        source,
    }
}

/// Write `bytes` to `path` atomically.
///
/// The data go to a new temporary file `.{file}.XXXXXXXXXXXX.tmp` (random
/// name) in the same directory, which is synced and then renamed over
/// `path`; readers see either the old file or the complete new one. The
/// parent directory is created if missing. On failure the temporary file is
/// removed.
pub fn atomic_write(path: &Path, bytes: &[u8]) -> Result<(), ExportError> {
    let mut set = OutputSet::new();
    set.add(path, bytes.to_vec());
    set.commit().map(|_| ())
}

/// Directory and file name of an output path (`.` when it has no parent).
fn split_path(path: &Path) -> Result<(PathBuf, &std::ffi::OsStr), ExportError> {
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
    Ok((dir, file_name))
}

/// A new, empty temporary file beside `path`: same directory (created if
/// missing), created with create-new semantics under a random name, with
/// the permissions an ordinary new file gets (0666 less the umask). Dropped
/// unrenamed, it is removed.
fn temp_beside(path: &Path) -> Result<NamedTempFile, ExportError> {
    let (dir, file_name) = split_path(path)?;
    fs::create_dir_all(&dir).map_err(|e| io_err(&dir, e))?;
    let mut prefix = std::ffi::OsString::from(".");
    prefix.push(file_name);
    prefix.push(".");
    prefix.push(crate::io::publish::owner_tag());
    prefix.push("-");
    clean_stale_temps(&dir, file_name);
    let mut b = tempfile::Builder::new();
    b.prefix(&prefix).suffix(".tmp").rand_bytes(12);
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        b.permissions(fs::Permissions::from_mode(0o666));
    }
    b.tempfile_in(&dir).map_err(|e| io_err(&dir, e))
}

/// Removes temporary files `.{file}.{host}-{pid}-{random}.tmp` in `dir`
/// left by processes that no longer run (a kill -9 between staging and
/// renaming).
fn clean_stale_temps(dir: &Path, file_name: &std::ffi::OsStr) {
    let prefix = format!(".{}.", file_name.to_string_lossy());
    let Ok(entries) = fs::read_dir(dir) else {
        return;
    };
    for e in entries.flatten() {
        let n = e.file_name();
        let n = n.to_string_lossy();
        if let Some(rest) = n.strip_prefix(&prefix).and_then(|r| r.strip_suffix(".tmp"))
            && let Some((tag, _)) = rest.rsplit_once('-')
            && crate::io::publish::owner_gone(tag)
        {
            let _ = fs::remove_file(e.path());
        }
    }
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

impl Cell {
    /// A count of unstable modes; an empty cell where the stability could
    /// not be decided (the eigenvalue solve failed: `usize::MAX`).
    pub fn modes(n: usize) -> Cell {
        if n == usize::MAX {
            Cell::Text(String::new())
        } else {
            Cell::Int(i64::try_from(n).unwrap_or(i64::MAX))
        }
    }
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

    /// Render as CSV text (header line, then one line per row, `\n`
    /// endings), written by the `csv` crate: text is quoted only where it
    /// must be (a comma, quote or line break in it), numbers in their
    /// shortest exact round-trip form (`-0` as `0`), integers as integers,
    /// booleans as `true` / `false`.
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
        let csv_err = |e: csv::Error| ExportError::Csv {
            what: e.to_string(),
        };
        let mut w = csv::WriterBuilder::new()
            .terminator(csv::Terminator::Any(b'\n'))
            .quote_style(csv::QuoteStyle::Necessary)
            .from_writer(Vec::new());
        w.write_record(&self.columns).map_err(csv_err)?;
        let mut fields: Vec<String> = Vec::with_capacity(self.columns.len());
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
            fields.clear();
            for (k, cell) in row.iter().enumerate() {
                fields.push(match cell {
                    Cell::Num(v) => {
                        if !v.is_finite() {
                            return Err(ExportError::NonFinite {
                                what: format!("column '{}' (row {})", self.columns[k], r),
                            });
                        }
                        // Normalise -0 to 0 for tidiness; `{}` is round-trip exact.
                        let v = if *v == 0.0 { 0.0 } else { *v };
                        format!("{v}")
                    }
                    Cell::Int(i) => i.to_string(),
                    Cell::Text(s) => s.clone(),
                    Cell::Bool(b) => b.to_string(),
                });
            }
            w.write_record(&fields).map_err(csv_err)?;
        }
        let bytes = w.into_inner().map_err(|e| ExportError::Csv {
            what: e.error().to_string(),
        })?;
        String::from_utf8(bytes).map_err(|e| ExportError::Csv {
            what: e.to_string(),
        })
    }
}

/// What a staged file holds.
#[derive(Debug)]
enum Content {
    /// Bytes computed in memory.
    Bytes(Vec<u8>),
    /// A NetCDF file, written by netcdf3 into the temporary file at commit.
    NetCdf(Box<NcFile>),
}

/// A set of output files staged in memory and written together by [`OutputSet::commit`].
#[derive(Debug, Default)]
pub struct OutputSet {
    files: Vec<(PathBuf, Content)>,
}

impl OutputSet {
    /// An empty set.
    pub fn new() -> Self {
        Self::default()
    }

    fn stage(&mut self, path: PathBuf, content: Content) {
        if let Some(slot) = self.files.iter_mut().find(|(p, _)| *p == path) {
            slot.1 = content;
        } else {
            self.files.push((path, content));
        }
    }

    /// Stage `bytes` for `path`. Staging the same path again replaces the earlier content.
    pub fn add(&mut self, path: impl Into<PathBuf>, bytes: Vec<u8>) {
        self.stage(path.into(), Content::Bytes(bytes));
    }

    /// Stage UTF-8 text for `path`.
    pub fn add_text(&mut self, path: impl Into<PathBuf>, text: &str) {
        self.add(path, text.as_bytes().to_vec());
    }

    /// Stage a JSON value, pretty-printed with a final newline.
    pub fn add_json(&mut self, path: impl Into<PathBuf>, value: &impl serde::Serialize) {
        self.add_text(
            path,
            &(serde_json::to_string_pretty(value).unwrap_or_default() + "\n"),
        );
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

    /// Stage a NetCDF file. It is checked now ([`NcFile::check`]: fails,
    /// staging nothing, on a non-finite value or a definition netcdf3
    /// refuses) and written by netcdf3 straight into its temporary file
    /// when the set is committed.
    pub fn add_netcdf(&mut self, path: impl Into<PathBuf>, nc: NcFile) -> Result<(), ExportError> {
        nc.check()?;
        self.stage(path.into(), Content::NetCdf(Box::new(nc)));
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

    /// Publish the staged files as the whole content of the directory
    /// `dir` (every staged path must lie inside it), in one step: see
    /// [`crate::io::publish`]. Returns the written paths, in staging order.
    pub fn publish(self, dir: &Path) -> Result<Vec<PathBuf>, ExportError> {
        let mut files: Vec<(PathBuf, crate::io::publish::Writer<'_>)> = Vec::new();
        for (path, content) in self.files {
            let rel = inside(&path, dir)?.to_path_buf();
            let shown = path.clone();
            let write: crate::io::publish::Writer<'_> = match content {
                Content::Bytes(b) => {
                    Box::new(move |mut f: &fs::File| f.write_all(&b).map_err(|e| io_err(&shown, e)))
                }
                Content::NetCdf(nc) => Box::new(move |f: &fs::File| {
                    nc.write_file(f).map_err(|e| match e {
                        ExportError::NetCdf { what } => ExportError::NetCdf {
                            what: format!("{}: {what}", shown.display()),
                        },
                        other => other,
                    })
                }),
            };
            files.push((rel, write));
        }
        crate::io::publish::publish_dir(dir, files)
    }

    /// The staged files in memory, named relative to `dir` (every staged
    /// path must lie inside it, as for [`OutputSet::publish`]), NetCDF
    /// files rendered to their bytes: nothing is written.
    pub fn into_files(self, dir: &Path) -> Result<Vec<(String, Vec<u8>)>, ExportError> {
        self.files
            .into_iter()
            .map(|(path, content)| {
                let rel = inside(&path, dir)?.to_string_lossy().into_owned();
                let bytes = match content {
                    Content::Bytes(b) => b,
                    Content::NetCdf(nc) => nc.to_bytes()?,
                };
                Ok((rel, bytes))
            })
            .collect()
    }

    /// Write every staged file, all or nothing as far as the file system allows.
    ///
    /// First each file is written in full into a new temporary file in its
    /// destination directory (see [`atomic_write`]; NetCDF files by netcdf3
    /// directly) and synced; if any of that fails, every temporary file is
    /// removed and no destination is touched. Then the temporary files are
    /// renamed into place in staging order. Only a failing rename (rare: e.g.
    /// the destination is a directory) can leave the set half committed: the
    /// files renamed before it stay (each one complete), the temporary files
    /// after it are removed.
    ///
    /// Returns the written paths, in staging order.
    pub fn commit(self) -> Result<Vec<PathBuf>, ExportError> {
        let mut ready: Vec<(NamedTempFile, PathBuf)> = Vec::with_capacity(self.files.len());
        // Any early return drops `ready`, which removes its temporary files.
        for (path, content) in self.files {
            let mut tmp = temp_beside(&path)?;
            let tmp_path = tmp.path().to_path_buf();
            match &content {
                Content::Bytes(b) => tmp.write_all(b).map_err(|e| io_err(&tmp_path, e))?,
                Content::NetCdf(nc) => nc.write_file(tmp.as_file()).map_err(|e| match e {
                    ExportError::NetCdf { what } => ExportError::NetCdf {
                        what: format!("{}: {what}", path.display()),
                    },
                    other => other,
                })?,
            }
            tmp.as_file().sync_all().map_err(|e| io_err(&tmp_path, e))?;
            ready.push((tmp, path));
        }
        let mut written = Vec::with_capacity(ready.len());
        let mut dirs: Vec<PathBuf> = Vec::new();
        for (tmp, path) in ready {
            // On failure the PersistError (holding the file) and the
            // temporary files not yet renamed are dropped, which removes them.
            tmp.persist(&path).map_err(|e| io_err(&path, e.error))?;
            if let Ok((dir, _)) = split_path(&path)
                && !dirs.contains(&dir)
            {
                dirs.push(dir);
            }
            written.push(path);
        }
        // Best effort: make the renames themselves durable.
        for dir in dirs {
            if let Ok(d) = fs::File::open(&dir) {
                let _ = d.sync_all();
            }
        }
        Ok(written)
    }
}

/// `path` relative to `dir`, refused when it does not lie inside it (a
/// staged output must be inside `--out`).
fn inside<'a>(path: &'a Path, dir: &Path) -> Result<&'a Path, ExportError> {
    path.strip_prefix(dir).map_err(|_| ExportError::Refused {
        what: format!(
            "output `{}` is not inside --out `{}`",
            path.display(),
            dir.display()
        ),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A fresh directory beside the test binary (in the build directory).
    fn scratch(name: &str) -> PathBuf {
        let exe = std::env::current_exe().unwrap();
        let d = exe.parent().unwrap().join(format!(
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

    fn names(dir: &Path) -> Vec<String> {
        let mut v: Vec<String> = fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().into_string().unwrap())
            .collect();
        v.sort();
        v
    }

    /// A NetCDF file staged in a set is written by netcdf3 into the set's
    /// temporary file and renamed with the rest; netcdf3's reader reads it back.
    #[test]
    fn output_set_writes_netcdf_with_the_rest() {
        let dir = scratch("outset-nc");
        let mut nc = NcFile::new();
        nc.add_dim("n", 2).unwrap();
        let v = nc.add_var_f64("x", &["n"], vec![1.5, -2.0]).unwrap();
        nc.var_attr_text(v, "units", "1");
        let mut set = OutputSet::new();
        set.add_text(dir.join("a.txt"), "a");
        set.add_netcdf(dir.join("x.nc"), nc.clone()).unwrap();
        let mut bad = NcFile::new();
        bad.add_dim("n", 1).unwrap();
        bad.add_var_f64("y", &["n"], vec![f64::NAN]).unwrap();
        assert!(matches!(
            set.add_netcdf(dir.join("y.nc"), bad),
            Err(ExportError::NonFinite { .. })
        ));
        assert!(!dir.exists(), "staging must not touch the disk");
        let written = set.commit().unwrap();
        assert_eq!(written, vec![dir.join("a.txt"), dir.join("x.nc")]);
        assert_eq!(names(&dir), vec!["a.txt", "x.nc"]);
        assert_eq!(fs::read(dir.join("x.nc")).unwrap(), nc.to_bytes().unwrap());
        let mut r = netcdf3::FileReader::open(dir.join("x.nc")).unwrap();
        assert_eq!(r.read_var_f64("x").unwrap(), vec![1.5, -2.0]);
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            let mode = fs::metadata(dir.join("x.nc")).unwrap().permissions().mode();
            assert_eq!(mode & 0o600, 0o600);
            // like a file from File::create: readable by others unless the umask forbids
            let plain = dir.join("plain");
            fs::File::create(&plain).unwrap();
            let want = fs::metadata(&plain).unwrap().permissions().mode() & 0o777;
            assert_eq!(mode & 0o777, want);
        }
        fs::remove_dir_all(&dir).unwrap();
    }

    /// A failure while writing the temporary files writes nothing: the
    /// files staged before the failing one are not renamed into place and
    /// no temporary file stays behind.
    #[test]
    fn output_set_failure_writes_nothing() {
        let dir = scratch("outset-fail");
        fs::create_dir_all(&dir).unwrap();
        fs::write(dir.join("blocker"), b"a file, not a directory").unwrap();
        let mut nc = NcFile::new();
        nc.add_dim("n", 1).unwrap();
        nc.add_var_i32("k", &["n"], vec![7]).unwrap();
        let mut set = OutputSet::new();
        set.add_text(dir.join("first.txt"), "1");
        set.add_netcdf(dir.join("second.nc"), nc).unwrap();
        set.add_text(dir.join("blocker").join("third.txt"), "3");
        assert!(matches!(set.commit(), Err(ExportError::Io { .. })));
        assert_eq!(names(&dir), vec!["blocker"]);
        fs::remove_dir_all(&dir).unwrap();
    }
}
