//! A small pure-Rust writer for NetCDF-3 files in the classic "64-bit offset"
//! variant (CDF-2, version byte 2), built entirely in memory.
//!
//! Supported: fixed-size dimensions (no record dimension), global and
//! per-variable attributes of type text (`NC_CHAR`), 32-bit integer
//! (`NC_INT`) and double (`NC_DOUBLE`), and variables of type `NC_INT` and
//! `NC_DOUBLE`. All multi-byte values are big-endian as the format requires.
//!
//! Non-finite doubles are never written: [`NcFile::to_bytes`] fails with
//! [`ExportError::NonFinite`] naming the variable or attribute. Callers who
//! need missing values must choose an explicit `_FillValue`.

use crate::io::export::ExportError;

const NC_DIMENSION: u32 = 0x0A;
const NC_VARIABLE: u32 = 0x0B;
const NC_ATTRIBUTE: u32 = 0x0C;
const NC_CHAR: u32 = 2;
const NC_INT: u32 = 4;
const NC_DOUBLE: u32 = 6;
/// Longest accepted name, in bytes (NetCDF's `NC_MAX_NAME`).
const MAX_NAME: usize = 256;

/// Handle of a variable inside an [`NcFile`], returned by the `add_var_*` methods.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct VarId(usize);

impl VarId {
    /// Zero-based index of the variable in definition order (its NetCDF variable id).
    pub fn index(self) -> usize {
        self.0
    }
}

#[derive(Debug, Clone)]
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
    fn nc_type(&self) -> u32 {
        match self {
            VarData::F64(_) => NC_DOUBLE,
            VarData::I32(_) => NC_INT,
        }
    }
}

#[derive(Debug, Clone)]
struct Var {
    name: String,
    dim_ids: Vec<usize>,
    attrs: Vec<Attr>,
    data: VarData,
}

/// An in-memory NetCDF-3 (CDF-2) file under construction.
///
/// Dimensions and variables are checked as they are added; attribute names
/// and values (including non-finite doubles) are checked by [`NcFile::to_bytes`].
#[derive(Debug, Clone, Default)]
pub struct NcFile {
    dims: Vec<(String, usize)>,
    global_attrs: Vec<Attr>,
    vars: Vec<Var>,
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

fn to_u32(n: usize, what: &str) -> Result<u32, ExportError> {
    u32::try_from(n)
        .ok()
        .filter(|&v| v <= i32::MAX as u32)
        .ok_or_else(|| too_large(format!("{what} = {n} exceeds the NetCDF-3 limit")))
}

fn pad4(n: usize) -> usize {
    n.div_ceil(4) * 4
}

struct Writer {
    buf: Vec<u8>,
}

impl Writer {
    fn u32(&mut self, v: u32) {
        self.buf.extend_from_slice(&v.to_be_bytes());
    }
    fn u64(&mut self, v: u64) {
        self.buf.extend_from_slice(&v.to_be_bytes());
    }
    fn pad(&mut self) {
        while !self.buf.len().is_multiple_of(4) {
            self.buf.push(0);
        }
    }
    fn name(&mut self, s: &str) -> Result<(), ExportError> {
        self.u32(to_u32(s.len(), "name length")?);
        self.buf.extend_from_slice(s.as_bytes());
        self.pad();
        Ok(())
    }
    fn attrs(&mut self, owner: &str, attrs: &[Attr]) -> Result<(), ExportError> {
        if attrs.is_empty() {
            self.u32(0);
            self.u32(0);
            return Ok(());
        }
        self.u32(NC_ATTRIBUTE);
        self.u32(to_u32(attrs.len(), "attribute count")?);
        for a in attrs {
            self.name(&a.name)?;
            match &a.value {
                AttrValue::Text(s) => {
                    self.u32(NC_CHAR);
                    self.u32(to_u32(s.len(), "text attribute length")?);
                    self.buf.extend_from_slice(s.as_bytes());
                }
                AttrValue::I32(v) => {
                    self.u32(NC_INT);
                    self.u32(to_u32(v.len(), "attribute length")?);
                    for x in v {
                        self.buf.extend_from_slice(&x.to_be_bytes());
                    }
                }
                AttrValue::F64(v) => {
                    if v.iter().any(|x| !x.is_finite()) {
                        return Err(ExportError::NonFinite {
                            what: format!("NetCDF attribute {}:{}", owner, a.name),
                        });
                    }
                    self.u32(NC_DOUBLE);
                    self.u32(to_u32(v.len(), "attribute length")?);
                    for x in v {
                        self.buf.extend_from_slice(&x.to_be_bytes());
                    }
                }
            }
            self.pad();
        }
        Ok(())
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
    /// record dimension in NetCDF-3, which this writer does not support), or
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
        to_u32(len, &format!("length of dimension {name}"))?;
        self.dims.push((name.to_string(), len));
        Ok(self.dims.len() - 1)
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
        let mut dim_ids = Vec::with_capacity(dims.len());
        let mut count: usize = 1;
        for d in dims {
            let id =
                self.dims
                    .iter()
                    .position(|(n, _)| n == d)
                    .ok_or_else(|| ExportError::Shape {
                        what: format!("variable {name} uses undefined dimension {d}"),
                    })?;
            count = count
                .checked_mul(self.dims[id].1)
                .ok_or_else(|| too_large(format!("size of variable {name}")))?;
            dim_ids.push(id);
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
            dim_ids,
            attrs: Vec::new(),
            data,
        });
        Ok(VarId(self.vars.len() - 1))
    }

    /// Define a double variable over the named dimensions (row-major data,
    /// last dimension fastest). `dims` may be empty for a scalar (one value).
    ///
    /// Errors: invalid/duplicate name, unknown dimension, or `data.len()` not
    /// equal to the product of the dimension lengths. Non-finite values are
    /// reported by [`NcFile::to_bytes`].
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
        // An unknown VarId cannot come from this file's add_var_*; remember it
        // as an attribute on no variable so to_bytes can report it.
        match self.vars.get_mut(var.0) {
            Some(v) => set_attr(&mut v.attrs, name, value),
            None => self.global_attrs.push(Attr {
                name: format!("\u{0}unknown variable {}:{}", var.0, name),
                value,
            }),
        }
    }

    /// Set a text attribute on a variable (e.g. `units`, `long_name`).
    pub fn var_attr_text(&mut self, var: VarId, name: &str, value: &str) {
        self.var_attr(var, name, AttrValue::Text(value.to_string()));
    }

    /// Set a double attribute on a variable (e.g. `valid_range`, `_FillValue`).
    pub fn var_attr_f64(&mut self, var: VarId, name: &str, values: &[f64]) {
        self.var_attr(var, name, AttrValue::F64(values.to_vec()));
    }

    /// Set a 32-bit integer attribute on a variable (e.g. `flag_values`).
    pub fn var_attr_i32(&mut self, var: VarId, name: &str, values: &[i32]) {
        self.var_attr(var, name, AttrValue::I32(values.to_vec()));
    }

    /// Serialise to the bytes of a CDF-2 file.
    ///
    /// Errors: [`ExportError::NonFinite`] naming the variable or attribute if
    /// any double is NaN or infinite; [`ExportError::InvalidName`] for a bad
    /// attribute name or an attribute attached to an unknown variable;
    /// [`ExportError::TooLarge`] if a format limit would be exceeded.
    pub fn to_bytes(&self) -> Result<Vec<u8>, ExportError> {
        for a in &self.global_attrs {
            if a.name.starts_with('\u{0}') {
                return Err(ExportError::InvalidName {
                    name: a.name.trim_start_matches('\u{0}').to_string(),
                    why: "attribute set on a variable id not defined in this file".into(),
                });
            }
            validate_name(&a.name)?;
        }
        for v in &self.vars {
            for a in &v.attrs {
                validate_name(&a.name)?;
            }
            if let VarData::F64(d) = &v.data
                && d.iter().any(|x| !x.is_finite())
            {
                return Err(ExportError::NonFinite {
                    what: format!("NetCDF variable {}", v.name),
                });
            }
        }

        let mut w = Writer { buf: Vec::new() };
        w.buf.extend_from_slice(b"CDF\x02");
        w.u32(0); // numrecs: no record dimension
        if self.dims.is_empty() {
            w.u32(0);
            w.u32(0);
        } else {
            w.u32(NC_DIMENSION);
            w.u32(to_u32(self.dims.len(), "dimension count")?);
            for (name, len) in &self.dims {
                w.name(name)?;
                w.u32(to_u32(*len, "dimension length")?);
            }
        }
        w.attrs("global", &self.global_attrs)?;

        // Variable list; `begin` offsets are patched once the header size is known.
        let mut begin_slots = Vec::with_capacity(self.vars.len());
        if self.vars.is_empty() {
            w.u32(0);
            w.u32(0);
        } else {
            w.u32(NC_VARIABLE);
            w.u32(to_u32(self.vars.len(), "variable count")?);
            for v in &self.vars {
                w.name(&v.name)?;
                w.u32(to_u32(v.dim_ids.len(), "variable rank")?);
                for &d in &v.dim_ids {
                    w.u32(to_u32(d, "dimension id")?);
                }
                w.attrs(&v.name, &v.attrs)?;
                w.u32(v.data.nc_type());
                let vsize = pad4(v.data.len() * v.data.elem_size());
                w.u32(u32::try_from(vsize).map_err(|_| {
                    too_large(format!("variable {} exceeds the 4 GiB limit", v.name))
                })?);
                begin_slots.push(w.buf.len());
                w.u64(0);
            }
        }

        let mut offset = w.buf.len();
        for (v, slot) in self.vars.iter().zip(&begin_slots) {
            w.buf[*slot..*slot + 8].copy_from_slice(&(offset as u64).to_be_bytes());
            offset += pad4(v.data.len() * v.data.elem_size());
        }
        w.buf.reserve(offset - w.buf.len());
        for v in &self.vars {
            match &v.data {
                VarData::F64(d) => {
                    for x in d {
                        w.buf.extend_from_slice(&x.to_be_bytes());
                    }
                }
                VarData::I32(d) => {
                    for x in d {
                        w.buf.extend_from_slice(&x.to_be_bytes());
                    }
                }
            }
            w.pad();
        }
        debug_assert_eq!(w.buf.len(), offset);
        Ok(w.buf)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // ---- a minimal independent CDF-1/CDF-2 reader, for round-trip checks ----

    #[derive(Debug, PartialEq)]
    enum Val {
        Text(String),
        Int(Vec<i32>),
        Dbl(Vec<f64>),
    }

    #[derive(Debug)]
    struct RVar {
        name: String,
        dims: Vec<usize>,
        attrs: Vec<(String, Val)>,
        data: Val,
    }

    struct Reader<'a> {
        b: &'a [u8],
        p: usize,
        version: u8,
    }

    impl Reader<'_> {
        fn u32(&mut self) -> u32 {
            let v = u32::from_be_bytes(self.b[self.p..self.p + 4].try_into().unwrap());
            self.p += 4;
            v
        }
        fn off(&mut self) -> usize {
            if self.version == 2 {
                let v = u64::from_be_bytes(self.b[self.p..self.p + 8].try_into().unwrap());
                self.p += 8;
                v as usize
            } else {
                self.u32() as usize
            }
        }
        fn name(&mut self) -> String {
            let n = self.u32() as usize;
            let s = String::from_utf8(self.b[self.p..self.p + n].to_vec()).unwrap();
            self.p += n.div_ceil(4) * 4;
            s
        }
        fn values(&mut self, ty: u32, n: usize, at: Option<usize>) -> Val {
            let mut p = at.unwrap_or(self.p);
            let start = p;
            let v = match ty {
                2 => {
                    let s = String::from_utf8(self.b[p..p + n].to_vec()).unwrap();
                    p += n;
                    Val::Text(s)
                }
                4 => Val::Int(
                    (0..n)
                        .map(|_| {
                            let x = i32::from_be_bytes(self.b[p..p + 4].try_into().unwrap());
                            p += 4;
                            x
                        })
                        .collect(),
                ),
                6 => Val::Dbl(
                    (0..n)
                        .map(|_| {
                            let x = f64::from_be_bytes(self.b[p..p + 8].try_into().unwrap());
                            p += 8;
                            x
                        })
                        .collect(),
                ),
                t => panic!("unexpected type {t}"),
            };
            if at.is_none() {
                // padding must be zero bytes
                let end = start + (p - start).div_ceil(4) * 4;
                assert!(self.b[p..end].iter().all(|&z| z == 0));
                self.p = end;
            }
            v
        }
        fn attrs(&mut self) -> Vec<(String, Val)> {
            let tag = self.u32();
            let n = self.u32() as usize;
            if tag == 0 {
                assert_eq!(n, 0);
                return vec![];
            }
            assert_eq!(tag, NC_ATTRIBUTE);
            (0..n)
                .map(|_| {
                    let name = self.name();
                    let ty = self.u32();
                    let k = self.u32() as usize;
                    (name, self.values(ty, k, None))
                })
                .collect()
        }
    }

    type Parsed = (Vec<(String, usize)>, Vec<(String, Val)>, Vec<RVar>);

    fn parse(b: &[u8]) -> Parsed {
        assert_eq!(&b[..3], b"CDF");
        let mut r = Reader {
            b,
            p: 4,
            version: b[3],
        };
        assert_eq!(r.u32(), 0, "numrecs");
        let tag = r.u32();
        let nd = r.u32() as usize;
        assert!(tag == NC_DIMENSION || (tag == 0 && nd == 0));
        let dims: Vec<(String, usize)> = (0..nd)
            .map(|_| {
                let n = r.name();
                (n, r.u32() as usize)
            })
            .collect();
        let gatts = r.attrs();
        let tag = r.u32();
        let nv = r.u32() as usize;
        assert!(tag == NC_VARIABLE || (tag == 0 && nv == 0));
        let mut vars = vec![];
        let mut last_end = 0;
        for _ in 0..nv {
            let name = r.name();
            let rank = r.u32() as usize;
            let vdims: Vec<usize> = (0..rank).map(|_| r.u32() as usize).collect();
            let attrs = r.attrs();
            let ty = r.u32();
            let vsize = r.u32() as usize;
            let begin = r.off();
            let count: usize = vdims.iter().map(|&d| dims[d].1).product();
            let esz = if ty == 6 { 8 } else { 4 };
            assert_eq!(vsize, (count * esz).div_ceil(4) * 4);
            let data = r.values(ty, count, Some(begin));
            last_end = last_end.max(begin + vsize);
            vars.push(RVar {
                name,
                dims: vdims,
                attrs,
                data,
            });
        }
        assert!(vars.iter().all(|_| true));
        assert_eq!(last_end.max(r.p), b.len(), "file length");
        (dims, gatts, vars)
    }

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
        f.var_attr_text(t, "units", "degC");
        f.var_attr_f64(t, "valid_range", &[-100.0, 100.0]);
        f.var_attr_i32(t, "flag", &[1, 2, 3]);
        f.add_var_f64("scalar", &[], vec![0.5]).unwrap();
        f
    }

    #[test]
    fn round_trip() {
        let bytes = sample().to_bytes().unwrap();
        assert_eq!(&bytes[..4], b"CDF\x02");
        let (dims, gatts, vars) = parse(&bytes);
        assert_eq!(dims, vec![("lat".into(), 3), ("day".into(), 2)]);
        assert_eq!(
            gatts,
            vec![
                ("title".into(), Val::Text("test file".into())),
                ("solar_constant_W_m2".into(), Val::Dbl(vec![1361.0])),
            ]
        );
        assert_eq!(vars.len(), 4);
        assert_eq!(vars[0].name, "lat");
        assert_eq!(vars[0].data, Val::Dbl(vec![-60.0, 0.0, 60.0]));
        assert_eq!(
            vars[0].attrs,
            vec![("units".into(), Val::Text("degrees_north".into()))]
        );
        assert_eq!(vars[1].data, Val::Int(vec![0, 182]));
        assert_eq!(vars[2].name, "temperature");
        assert_eq!(vars[2].dims, vec![1, 0]);
        assert_eq!(
            vars[2].data,
            Val::Dbl(vec![-20.5, 25.0, -18.25, -30.0, 27.125, -10.0])
        );
        assert_eq!(vars[2].attrs.len(), 3);
        assert_eq!(vars[2].attrs[1].1, Val::Dbl(vec![-100.0, 100.0]));
        assert_eq!(vars[2].attrs[2].1, Val::Int(vec![1, 2, 3]));
        assert_eq!(vars[3].dims, Vec::<usize>::new());
        assert_eq!(vars[3].data, Val::Dbl(vec![0.5]));
    }

    #[test]
    fn odd_length_i32_is_padded_and_empty_file_ok() {
        let mut f = NcFile::new();
        f.add_dim("n", 3).unwrap();
        f.add_var_i32("a", &["n"], vec![1, 2, 3]).unwrap();
        f.add_var_f64("b", &["n"], vec![1.0, 2.0, 3.0]).unwrap();
        let (_, _, vars) = parse(&f.to_bytes().unwrap());
        assert_eq!(vars[1].data, Val::Dbl(vec![1.0, 2.0, 3.0]));
        let empty = NcFile::new().to_bytes().unwrap();
        assert_eq!(empty.len(), 4 + 4 + 8 * 3);
        parse(&empty);
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
        f.add_var_f64("x", &["lat"], vec![1.0, f64::NAN, 2.0])
            .unwrap();
        match f.to_bytes() {
            Err(ExportError::NonFinite { what }) => assert!(what.contains('x')),
            other => panic!("expected NonFinite, got {other:?}"),
        }
        assert!(f.add_var_f64("x", &["lat"], vec![0.0; 3]).is_err());

        let mut g = NcFile::new();
        g.global_attr_f64("bad", &[f64::INFINITY]);
        assert!(matches!(g.to_bytes(), Err(ExportError::NonFinite { .. })));
        let mut g = NcFile::new();
        g.global_attr_text("bad name", "x");
        assert!(matches!(g.to_bytes(), Err(ExportError::InvalidName { .. })));
        let mut g = NcFile::new();
        g.var_attr_text(VarId(5), "units", "K");
        assert!(matches!(g.to_bytes(), Err(ExportError::InvalidName { .. })));
    }
}
