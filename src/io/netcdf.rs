//! A small builder for CF NetCDF-3 files, written by the [`netcdf3`] crate.
//!
//! [`NcFile`] collects dimensions, attributes and variables (with their
//! data) as plain values, checks them as they are added, and hands them to
//! [`netcdf3::FileWriter`] in the "64-bit offset" format (CDF-2) when written:
//! into an open file ([`NcFile::write_file`], used by
//! [`crate::io::export::OutputSet`] to write straight into its temporary
//! file) or into memory ([`NcFile::to_bytes`]).
//!
//! Supported: fixed-size dimensions (no record dimension), global and
//! per-variable attributes of type text (`NC_CHAR`), 32-bit integer
//! (`NC_INT`) and double (`NC_DOUBLE`), and variables of type `NC_INT` and
//! `NC_DOUBLE` (row-major data, last dimension fastest).
//!
//! Non-finite doubles are never written: [`NcFile::check`] (and every write)
//! fails with [`ExportError::NonFinite`] naming the variable or attribute.
//! Callers who need missing values write an explicit `_FillValue`
//! ([`FILL_F64`], [`FILL_I32`]).

use crate::io::export::ExportError;
use netcdf3::{DataSet, FileWriter, Version};
use std::cell::RefCell;
use std::io::{Seek, SeekFrom, Write};
use std::rc::Rc;

/// Longest accepted name, in bytes (NetCDF's `NC_MAX_NAME`).
const MAX_NAME: usize = 256;

/// The NetCDF default fill value of doubles (`NC_FILL_DOUBLE`), used as `_FillValue`.
pub const FILL_F64: f64 = netcdf3::NC_FILL_F64;
/// The NetCDF default fill value of 32-bit integers (`NC_FILL_INT`), used as `_FillValue`.
pub const FILL_I32: i32 = netcdf3::NC_FILL_I32;

/// Handle of a variable inside an [`NcFile`], returned by the `add_var_*` methods.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct VarId(usize);

impl VarId {
    /// Zero-based index of the variable in definition order (its NetCDF variable id).
    pub fn index(self) -> usize {
        self.0
    }
}

#[derive(Debug, Clone, PartialEq)]
enum AttrValue {
    Text(String),
    F64(Vec<f64>),
    I32(Vec<i32>),
}

#[derive(Debug, Clone)]
struct Attr {
    name: String,
    value: AttrValue,
}

#[derive(Debug, Clone)]
enum VarData {
    F64(Vec<f64>),
    I32(Vec<i32>),
}

impl VarData {
    fn len(&self) -> usize {
        match self {
            VarData::F64(v) => v.len(),
            VarData::I32(v) => v.len(),
        }
    }
    fn elem_size(&self) -> usize {
        match self {
            VarData::F64(_) => 8,
            VarData::I32(_) => 4,
        }
    }
}

#[derive(Debug, Clone)]
struct Var {
    name: String,
    dims: Vec<String>,
    attrs: Vec<Attr>,
    data: VarData,
}

/// A NetCDF-3 (CDF-2) file under construction.
///
/// Dimensions and variables are checked as they are added; attribute names
/// and values (including non-finite doubles) and variable data are checked
/// by [`NcFile::check`], which every write calls first.
#[derive(Debug, Clone, Default)]
pub struct NcFile {
    dims: Vec<(String, usize)>,
    global_attrs: Vec<Attr>,
    vars: Vec<Var>,
    /// Attributes set on a [`VarId`] that this file never handed out.
    orphan_attrs: Vec<String>,
}

/// Check that `name` is an acceptable NetCDF name.
///
/// Accepted: ASCII, 1..=256 bytes, first character a letter or underscore,
/// then letters, digits, `_`, `.` or `-`. (A conservative subset of what the
/// format allows.)
pub fn validate_name(name: &str) -> Result<(), ExportError> {
    let bad = |why: &str| ExportError::InvalidName {
        name: name.to_string(),
        why: why.to_string(),
    };
    let mut chars = name.chars();
    let first = chars.next().ok_or_else(|| bad("name is empty"))?;
    if !(first.is_ascii_alphabetic() || first == '_') {
        return Err(bad("must start with an ASCII letter or underscore"));
    }
    if name.len() > MAX_NAME {
        return Err(bad("longer than 256 bytes"));
    }
    if !chars.all(|c| c.is_ascii_alphanumeric() || matches!(c, '_' | '.' | '-')) {
        return Err(bad(
            "may contain only ASCII letters, digits, '_', '.' and '-'",
        ));
    }
    Ok(())
}

fn set_attr(list: &mut Vec<Attr>, name: &str, value: AttrValue) {
    if let Some(a) = list.iter_mut().find(|a| a.name == name) {
        a.value = value;
    } else {
        list.push(Attr {
            name: name.to_string(),
            value,
        });
    }
}

fn too_large(what: String) -> ExportError {
    ExportError::TooLarge { what }
}

fn netcdf_err(what: impl std::fmt::Display) -> ExportError {
    ExportError::NetCdf {
        what: what.to_string(),
    }
}

/// netcdf3's write errors have no `Display`; an I/O error keeps only its kind.
fn write_err(e: netcdf3::WriteError) -> ExportError {
    match e {
        netcdf3::WriteError::IOErrorKind(kind) => netcdf_err(format!("write failed: {kind}")),
        other => netcdf_err(format!("{other:?}")),
    }
}

fn check_attrs(owner: &str, attrs: &[Attr]) -> Result<(), ExportError> {
    for a in attrs {
        validate_name(&a.name)?;
        match &a.value {
            AttrValue::F64(v) if v.iter().any(|x| !x.is_finite()) => {
                return Err(ExportError::NonFinite {
                    what: format!("NetCDF attribute {owner}:{}", a.name),
                });
            }
            AttrValue::Text(s) if s.len() > i32::MAX as usize => {
                return Err(too_large(format!("attribute {owner}:{}", a.name)));
            }
            _ => {}
        }
    }
    Ok(())
}

/// A cloneable handle on one writer, so that the writer can be taken back
/// (flushed, synced, its errors seen) after [`FileWriter::close`] consumed
/// the boxed stream it was given.
struct Shared<W>(Rc<RefCell<W>>);

impl<W: Write> Write for Shared<W> {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        self.0.borrow_mut().write(buf)
    }
    fn flush(&mut self) -> std::io::Result<()> {
        self.0.borrow_mut().flush()
    }
}

impl<W: Seek> Seek for Shared<W> {
    fn seek(&mut self, pos: SeekFrom) -> std::io::Result<u64> {
        self.0.borrow_mut().seek(pos)
    }
}

impl NcFile {
    /// An empty file: no dimensions, attributes or variables.
    pub fn new() -> Self {
        Self::default()
    }

    /// Define a fixed-size dimension and return its id (definition order).
    ///
    /// Errors: invalid or duplicate name, zero length (length 0 denotes the
    /// record dimension in NetCDF-3, which this builder does not support), or
    /// a length beyond the format limit.
    pub fn add_dim(&mut self, name: &str, len: usize) -> Result<usize, ExportError> {
        validate_name(name)?;
        if self.dims.iter().any(|(n, _)| n == name) {
            return Err(ExportError::InvalidName {
                name: name.to_string(),
                why: "dimension already defined".into(),
            });
        }
        if len == 0 {
            return Err(ExportError::Empty {
                what: format!("dimension {name}"),
            });
        }
        if len > i32::MAX as usize {
            return Err(too_large(format!(
                "length of dimension {name} = {len} exceeds the NetCDF-3 limit"
            )));
        }
        self.dims.push((name.to_string(), len));
        Ok(self.dims.len() - 1)
    }

    /// Length of a defined dimension.
    pub fn dim_len(&self, name: &str) -> Option<usize> {
        self.dims.iter().find(|(n, _)| n == name).map(|(_, l)| *l)
    }

    /// Set a global text attribute (replacing one of the same name).
    pub fn global_attr_text(&mut self, name: &str, value: &str) {
        set_attr(
            &mut self.global_attrs,
            name,
            AttrValue::Text(value.to_string()),
        );
    }

    /// Set a global double attribute (replacing one of the same name).
    pub fn global_attr_f64(&mut self, name: &str, values: &[f64]) {
        set_attr(
            &mut self.global_attrs,
            name,
            AttrValue::F64(values.to_vec()),
        );
    }

    /// Set a global 32-bit integer attribute (replacing one of the same name).
    pub fn global_attr_i32(&mut self, name: &str, values: &[i32]) {
        set_attr(
            &mut self.global_attrs,
            name,
            AttrValue::I32(values.to_vec()),
        );
    }

    fn add_var(&mut self, name: &str, dims: &[&str], data: VarData) -> Result<VarId, ExportError> {
        validate_name(name)?;
        if self.vars.iter().any(|v| v.name == name) {
            return Err(ExportError::InvalidName {
                name: name.to_string(),
                why: "variable already defined".into(),
            });
        }
        let mut count: usize = 1;
        for (k, d) in dims.iter().enumerate() {
            if dims[..k].contains(d) {
                return Err(ExportError::Shape {
                    what: format!("variable {name} uses dimension {d} twice"),
                });
            }
            let len = self.dim_len(d).ok_or_else(|| ExportError::Shape {
                what: format!("variable {name} uses undefined dimension {d}"),
            })?;
            count = count
                .checked_mul(len)
                .ok_or_else(|| too_large(format!("size of variable {name}")))?;
        }
        if data.len() != count {
            return Err(ExportError::Shape {
                what: format!(
                    "variable {name} has {} values but its dimensions ({}) hold {count}",
                    data.len(),
                    dims.join(", ")
                ),
            });
        }
        let bytes = count
            .checked_mul(data.elem_size())
            .ok_or_else(|| too_large(format!("size of variable {name}")))?;
        if bytes > (u32::MAX as usize) - 4 {
            return Err(too_large(format!(
                "variable {name} is larger than 4 GiB, beyond the 64-bit-offset format"
            )));
        }
        self.vars.push(Var {
            name: name.to_string(),
            dims: dims.iter().map(|d| d.to_string()).collect(),
            attrs: Vec::new(),
            data,
        });
        Ok(VarId(self.vars.len() - 1))
    }

    /// Define a double variable over the named dimensions (row-major data,
    /// last dimension fastest). `dims` may be empty for a scalar (one value).
    ///
    /// Errors: invalid/duplicate name, unknown or repeated dimension, or
    /// `data.len()` not equal to the product of the dimension lengths.
    /// Non-finite values are reported by [`NcFile::check`].
    pub fn add_var_f64(
        &mut self,
        name: &str,
        dims: &[&str],
        data: Vec<f64>,
    ) -> Result<VarId, ExportError> {
        self.add_var(name, dims, VarData::F64(data))
    }

    /// Define a 32-bit integer variable; see [`NcFile::add_var_f64`].
    pub fn add_var_i32(
        &mut self,
        name: &str,
        dims: &[&str],
        data: Vec<i32>,
    ) -> Result<VarId, ExportError> {
        self.add_var(name, dims, VarData::I32(data))
    }

    fn var_attr(&mut self, var: VarId, name: &str, value: AttrValue) {
        match self.vars.get_mut(var.0) {
            Some(v) => set_attr(&mut v.attrs, name, value),
            // An unknown VarId cannot come from this file's add_var_*;
            // remember it so check() can report it.
            None => self.orphan_attrs.push(format!("{}:{}", var.0, name)),
        }
    }

    /// Set a text attribute on a variable (e.g. `units`, `long_name`).
    pub fn var_attr_text(&mut self, var: VarId, name: &str, value: &str) {
        self.var_attr(var, name, AttrValue::Text(value.to_string()));
    }

    /// Set several text attributes on a variable, in order.
    pub fn var_attrs_text(&mut self, var: VarId, attrs: &[(&str, &str)]) {
        for (name, value) in attrs {
            self.var_attr_text(var, name, value);
        }
    }

    /// Set a double attribute on a variable (e.g. `valid_range`, `_FillValue`).
    pub fn var_attr_f64(&mut self, var: VarId, name: &str, values: &[f64]) {
        self.var_attr(var, name, AttrValue::F64(values.to_vec()));
    }

    /// Set a 32-bit integer attribute on a variable (e.g. `flag_values`).
    pub fn var_attr_i32(&mut self, var: VarId, name: &str, values: &[i32]) {
        self.var_attr(var, name, AttrValue::I32(values.to_vec()));
    }

    /// Check everything that adding did not: attribute names and values,
    /// non-finite doubles in variables, attributes set on unknown variables,
    /// and that [`netcdf3`] accepts the definition.
    ///
    /// Errors: [`ExportError::NonFinite`] naming the variable or attribute;
    /// [`ExportError::InvalidName`] for a bad attribute name or an attribute
    /// on an unknown variable; [`ExportError::NetCdf`] if netcdf3 refuses the
    /// definition.
    pub fn check(&self) -> Result<(), ExportError> {
        if let Some(a) = self.orphan_attrs.first() {
            return Err(ExportError::InvalidName {
                name: a.clone(),
                why: "attribute set on a variable id not defined in this file".into(),
            });
        }
        check_attrs("global", &self.global_attrs)?;
        for v in &self.vars {
            check_attrs(&v.name, &v.attrs)?;
            if let VarData::F64(d) = &v.data
                && d.iter().any(|x| !x.is_finite())
            {
                return Err(ExportError::NonFinite {
                    what: format!("NetCDF variable {}", v.name),
                });
            }
        }
        self.data_set().map(|_| ())
    }

    /// The netcdf3 definition (dimensions, variables, attributes; no data).
    fn data_set(&self) -> Result<DataSet, ExportError> {
        let mut ds = DataSet::new();
        for (name, len) in &self.dims {
            ds.add_fixed_dim(name, *len).map_err(netcdf_err)?;
        }
        for a in &self.global_attrs {
            match &a.value {
                AttrValue::Text(s) => ds.add_global_attr_string(&a.name, s),
                AttrValue::F64(v) => ds.add_global_attr_f64(&a.name, v.clone()),
                AttrValue::I32(v) => ds.add_global_attr_i32(&a.name, v.clone()),
            }
            .map_err(netcdf_err)?;
        }
        for v in &self.vars {
            match v.data {
                VarData::F64(_) => ds.add_var_f64(&v.name, &v.dims),
                VarData::I32(_) => ds.add_var_i32(&v.name, &v.dims),
            }
            .map_err(netcdf_err)?;
            for a in &v.attrs {
                match &a.value {
                    AttrValue::Text(s) => ds.add_var_attr_string(&v.name, &a.name, s),
                    AttrValue::F64(x) => ds.add_var_attr_f64(&v.name, &a.name, x.clone()),
                    AttrValue::I32(x) => ds.add_var_attr_i32(&v.name, &a.name, x.clone()),
                }
                .map_err(netcdf_err)?;
            }
        }
        Ok(ds)
    }

    /// Checks the file ([`NcFile::check`]) and has netcdf3 write it to
    /// `out` (from its start), then returns `out`.
    fn write_into<W: Write + Seek + 'static>(&self, out: W) -> Result<W, ExportError> {
        self.check()?;
        let ds = self.data_set()?;
        let shared = Rc::new(RefCell::new(out));
        let mut w = FileWriter::open_seek_write("", Box::new(Shared(Rc::clone(&shared))))
            .map_err(write_err)?;
        w.set_def(&ds, Version::Offset64Bit, 0).map_err(write_err)?;
        for v in &self.vars {
            match &v.data {
                VarData::F64(d) => w.write_var_f64(&v.name, d),
                VarData::I32(d) => w.write_var_i32(&v.name, d),
            }
            .map_err(write_err)?;
        }
        w.close().map_err(write_err)?;
        let out = Rc::try_unwrap(shared)
            .map_err(|_| netcdf_err("the NetCDF writer kept its output stream"))?
            .into_inner();
        Ok(out)
    }

    /// Writes the file into `file` (from its start, through a buffer) with
    /// netcdf3 and flushes it; the caller syncs and renames the file.
    ///
    /// Errors: those of [`NcFile::check`]; [`ExportError::NetCdf`] for a
    /// write error reported by netcdf3; [`std::io::Error`] from the final flush.
    pub fn write_file(&self, file: &std::fs::File) -> Result<(), ExportError> {
        let handle = file.try_clone().map_err(netcdf_err)?;
        let buffered = self.write_into(std::io::BufWriter::new(handle))?;
        buffered
            .into_inner()
            .map_err(|e| netcdf_err(e.into_error()))?;
        Ok(())
    }

    /// The bytes of the CDF-2 file, written by netcdf3 into memory.
    ///
    /// Errors: as [`NcFile::write_file`].
    pub fn to_bytes(&self) -> Result<Vec<u8>, ExportError> {
        Ok(self
            .write_into(std::io::Cursor::new(Vec::new()))?
            .into_inner())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use netcdf3::{DataType, FileReader};

    fn sample() -> NcFile {
        let mut f = NcFile::new();
        assert_eq!(f.add_dim("lat", 3).unwrap(), 0);
        assert_eq!(f.add_dim("day", 2).unwrap(), 1);
        f.global_attr_text("title", "test file");
        f.global_attr_f64("solar_constant_W_m2", &[1361.0]);
        let lat = f
            .add_var_f64("lat", &["lat"], vec![-60.0, 0.0, 60.0])
            .unwrap();
        f.var_attr_text(lat, "units", "degrees_north");
        let day = f.add_var_i32("day", &["day"], vec![0, 182]).unwrap();
        f.var_attr_text(day, "units", "days");
        let t = f
            .add_var_f64(
                "temperature",
                &["day", "lat"],
                vec![-20.5, 25.0, -18.25, -30.0, 27.125, -10.0],
            )
            .unwrap();
        f.var_attrs_text(t, &[("units", "degC"), ("long_name", "temperature")]);
        f.var_attr_f64(t, "valid_range", &[-100.0, 100.0]);
        f.var_attr_i32(t, "flag", &[1, 2, 3]);
        f.var_attr_text(t, "units", "K"); // replaces, keeps its place
        f.add_var_f64("scalar", &[], vec![0.5]).unwrap();
        f
    }

    fn read(bytes: Vec<u8>) -> FileReader {
        FileReader::open_seek_read("mem.nc", Box::new(std::io::Cursor::new(bytes))).unwrap()
    }

    /// Written by netcdf3 and read back by netcdf3's own reader: the same
    /// dimensions, attributes, types and values.
    #[test]
    fn round_trip_through_netcdf3_reader() {
        let bytes = sample().to_bytes().unwrap();
        assert_eq!(&bytes[..4], b"CDF\x02");
        let mut r = read(bytes);
        assert_eq!(r.version(), Version::Offset64Bit);
        let ds = r.data_set();
        assert_eq!(ds.dim_names(), vec!["lat".to_string(), "day".to_string()]);
        assert_eq!(ds.dim_size("lat"), Some(3));
        assert_eq!(
            ds.get_global_attr_names(),
            vec!["title".to_string(), "solar_constant_W_m2".to_string()]
        );
        assert_eq!(
            ds.get_global_attr_as_string("title").as_deref(),
            Some("test file")
        );
        assert_eq!(
            ds.get_global_attr_f64("solar_constant_W_m2"),
            Some(&[1361.0][..])
        );
        assert_eq!(
            ds.get_var_names(),
            vec!["lat", "day", "temperature", "scalar"]
        );
        assert_eq!(
            ds.get_var_attr_as_string("lat", "units").as_deref(),
            Some("degrees_north")
        );
        let t = ds.get_var("temperature").unwrap();
        assert_eq!(t.dim_names(), vec!["day".to_string(), "lat".to_string()]);
        assert_eq!(t.data_type(), DataType::F64);
        assert_eq!(
            t.get_attr_names(),
            vec!["units", "long_name", "valid_range", "flag"]
        );
        assert_eq!(t.get_attr_as_string("units").as_deref(), Some("K"));
        assert_eq!(t.get_attr_f64("valid_range"), Some(&[-100.0, 100.0][..]));
        assert_eq!(t.get_attr_i32("flag"), Some(&[1, 2, 3][..]));
        assert_eq!(ds.get_var("day").unwrap().data_type(), DataType::I32);
        assert_eq!(ds.get_var("scalar").unwrap().dim_names().len(), 0);
        assert_eq!(r.read_var_f64("lat").unwrap(), vec![-60.0, 0.0, 60.0]);
        assert_eq!(r.read_var_i32("day").unwrap(), vec![0, 182]);
        assert_eq!(
            r.read_var_f64("temperature").unwrap(),
            vec![-20.5, 25.0, -18.25, -30.0, 27.125, -10.0]
        );
        assert_eq!(r.read_var_f64("scalar").unwrap(), vec![0.5]);
    }

    #[test]
    fn odd_length_i32_and_empty_file_and_file_output() {
        let mut f = NcFile::new();
        f.add_dim("n", 3).unwrap();
        f.add_var_i32("a", &["n"], vec![1, 2, 3]).unwrap();
        f.add_var_f64("b", &["n"], vec![1.0, 2.0, 3.0]).unwrap();
        let bytes = f.to_bytes().unwrap();
        assert_eq!(bytes.len() % 4, 0);
        let mut r = read(bytes.clone());
        assert_eq!(r.read_var_i32("a").unwrap(), vec![1, 2, 3]);
        assert_eq!(r.read_var_f64("b").unwrap(), vec![1.0, 2.0, 3.0]);
        // the same bytes through a file (beside the test binary, not in /tmp)
        let exe = std::env::current_exe().unwrap();
        let tmp = tempfile::Builder::new()
            .prefix(".netcdf-unit-")
            .tempfile_in(exe.parent().unwrap())
            .unwrap();
        f.write_file(tmp.as_file()).unwrap();
        assert_eq!(std::fs::read(tmp.path()).unwrap(), bytes);
        let empty = NcFile::new().to_bytes().unwrap();
        assert_eq!(empty.len(), 4 + 4 + 8 * 3);
        read(empty);
    }

    #[test]
    fn rejects_bad_input() {
        let mut f = NcFile::new();
        assert!(f.add_dim("1lat", 3).is_err());
        assert!(f.add_dim("la t", 3).is_err());
        assert!(f.add_dim("", 3).is_err());
        assert!(f.add_dim("lat", 0).is_err());
        f.add_dim("lat", 3).unwrap();
        assert!(f.add_dim("lat", 4).is_err());
        assert!(matches!(
            f.add_var_f64("x", &["lat"], vec![1.0]),
            Err(ExportError::Shape { .. })
        ));
        assert!(matches!(
            f.add_var_f64("x", &["lon"], vec![1.0]),
            Err(ExportError::Shape { .. })
        ));
        assert!(matches!(
            f.add_var_f64("x", &["lat", "lat"], vec![1.0; 9]),
            Err(ExportError::Shape { .. })
        ));
        f.add_var_f64("x", &["lat"], vec![1.0, f64::NAN, 2.0])
            .unwrap();
        match f.to_bytes() {
            Err(ExportError::NonFinite { what }) => assert!(what.contains('x')),
            other => panic!("expected NonFinite, got {other:?}"),
        }
        assert!(f.add_var_f64("x", &["lat"], vec![0.0; 3]).is_err());

        let mut g = NcFile::new();
        g.global_attr_f64("bad", &[f64::INFINITY]);
        assert!(matches!(g.check(), Err(ExportError::NonFinite { .. })));
        let mut g = NcFile::new();
        g.global_attr_text("bad name", "x");
        assert!(matches!(g.to_bytes(), Err(ExportError::InvalidName { .. })));
        let mut g = NcFile::new();
        g.var_attr_text(VarId(5), "units", "K");
        assert!(matches!(g.to_bytes(), Err(ExportError::InvalidName { .. })));
    }
}
