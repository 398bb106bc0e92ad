//! `map.nc`: the CF-1.8 NetCDF file of a map, one dimension per across
//! key (named after the key, `.` as `_`) plus the traced parameter's cells.
use super::context::{CliError, VERSION};
use super::mapout::{Kept, residual_column};
use crate::analysis::sweep::{MapModel, MapSpec, STATES, state_bit};
use crate::io::netcdf::{FILL_F64, FILL_I32, NcFile};
use crate::model::Param;

fn sanitize(key: &str) -> String {
    key.replace('.', "_")
}

/// One model's part of `map.nc`: its model, its name in the `model`
/// dimension (None: a map of one model, without that dimension), its
/// slices in slice order and its per-cell grids (cell c of slice j at
/// index `c * slices.len() + j`).
pub(super) struct NcPart<'a> {
    /// The model that computed the slices.
    pub(super) mm: &'a MapModel,
    /// Its name along the `model` dimension (`map --hierarchy`).
    pub(super) model: Option<&'a str>,
    /// Its slices (their cell climates are moved into the arrays).
    pub(super) slices: &'a mut [Kept],
    /// Regime mask per cell.
    pub(super) regime: &'a [i32],
    /// Stable climates per cell.
    pub(super) count: &'a [i32],
}

/// The CF-1.8 NetCDF content of `map.nc`: the slice and cell axes (the
/// cells with their bounds), per cell the regime mask and the number of
/// stable climates, and per cell and climate (warmest first, `_FillValue`
/// past a cell's count) its state, global mean temperature, ice edges
/// (most poleward per hemisphere) and habitable fraction. Each part's
/// slices are the map's slices in slice order (flattened product, first
/// across key slowest; their cell climates are moved into the arrays,
/// leaving them empty), `ys` the cell centres, `history` the command
/// that reproduces the map; dimensions (vary cell,
/// first across key, ..., last across key), C order. With named parts
/// (`map --hierarchy`, the same grid in every model) every per-cell and
/// per-slice variable has a leading `model` dimension (the variable
/// `model` numbers them, with their names as `flag_meanings`), and the
/// largest residual of each slice is one variable per model,
/// `slice_max_residual_<model>`, since the models' residuals have
/// different units.
pub(super) fn map_netcdf(
    parts: &mut [NcPart],
    spec: &MapSpec,
    name: &str,
    scenario_toml: &str,
    ys: &[f64],
    history: &str,
) -> Result<NcFile, CliError> {
    let (ak, vk) = (spec.across.as_str(), spec.vary.as_str());
    let named = parts.iter().any(|p| p.model.is_some());
    let nm = parts.len();
    let nx = parts.first().map_or(0, |p| p.slices.len());
    let ny = ys.len();
    let nclim = parts
        .iter()
        .flat_map(|p| p.slices.iter())
        .flat_map(|s| s.slice.climates.iter().map(Vec::len))
        .max()
        .unwrap_or(0)
        .max(1);
    let per = ny * nx * nclim;
    let mut state = vec![FILL_I32; nm * per];
    let mut mean = vec![FILL_F64; nm * per];
    let mut north = vec![FILL_F64; nm * per];
    let mut south = vec![FILL_F64; nm * per];
    let mut habitable = vec![FILL_F64; nm * per];
    let (mut regime, mut count, mut flags) = (Vec::new(), Vec::new(), Vec::new());
    for (m, part) in parts.iter_mut().enumerate() {
        regime.extend_from_slice(part.regime);
        count.extend_from_slice(part.count);
        flags.extend(part.slices.iter().map(|s| s.failed as i32));
        for (i, s) in part.slices.iter_mut().enumerate() {
            // taken, not copied: the arrays hold them from here on
            let climates = std::mem::take(&mut s.slice.climates);
            for (j, cell) in climates.iter().enumerate().take(ny) {
                for (k, c) in cell.iter().enumerate() {
                    let at = m * per + (j * nx + i) * nclim + k;
                    state[at] = c.state as i32;
                    mean[at] = c.global_mean_c;
                    north[at] = c.ice_edge_north_deg;
                    south[at] = c.ice_edge_south_deg;
                    habitable[at] = c.habitable_fraction;
                }
            }
        }
    }
    // cell edges, by the formula of MapSpec::cell_value
    let edge =
        |c: usize| spec.vary_from + (spec.vary_to - spec.vary_from) * c as f64 / spec.cells as f64;
    let bnds: Vec<f64> = (0..ny).flat_map(|c| [edge(c), edge(c + 1)]).collect();
    let mut nc = NcFile::new();
    let across_p = Param::from_key(ak).expect("validated key");
    let vary_p = Param::from_key(vk).expect("validated key");
    let (adim, vdim) = (sanitize(ak), sanitize(vk));
    let bdim = format!("{vdim}_bnds");
    // the across dimensions, first key slowest: slice j of the flattened
    // product is element j of the across dimensions together
    let mdims: Vec<String> = spec.more.iter().map(|a| sanitize(&a.key)).collect();
    if named {
        nc.add_dim("model", nm)?;
    }
    nc.add_dim(&vdim, ny)?;
    nc.add_dim(&adim, spec.count)?;
    for (d, a) in mdims.iter().zip(&spec.more) {
        nc.add_dim(d, a.count)?;
    }
    nc.add_dim("climate", nclim)?;
    nc.add_dim("nv", 2)?;
    let lead: Vec<&str> = if named { vec!["model"] } else { Vec::new() };
    let mut slice_dims: Vec<&str> = vec![adim.as_str()];
    slice_dims.extend(mdims.iter().map(String::as_str));
    let mut model_slice_dims = lead.clone();
    model_slice_dims.extend(&slice_dims);
    let mut cell2 = lead.clone();
    cell2.push(vdim.as_str());
    cell2.extend(&slice_dims);
    let mut cell3 = cell2.clone();
    cell3.push("climate");
    let xs: Vec<f64> = (0..spec.count)
        .map(|i| spec.across_value(i * spec.inner()))
        .collect();
    let v = nc.add_var_f64(&adim, &[&adim], xs)?;
    nc.var_attrs_text(
        v,
        &[
            ("long_name", &format!("{ak} (slice parameter)")),
            ("units", across_p.unit()),
            ("axis", "X"),
        ],
    );
    for (d, a) in mdims.iter().zip(&spec.more) {
        let p = Param::from_key(&a.key).expect("validated key");
        let v = nc.add_var_f64(d, &[d.as_str()], (0..a.count).map(|i| a.value(i)).collect())?;
        nc.var_attrs_text(
            v,
            &[
                ("long_name", &format!("{} (slice parameter)", a.key)),
                ("units", p.unit()),
            ],
        );
    }
    let v = nc.add_var_f64(&vdim, &[&vdim], ys.to_vec())?;
    nc.var_attrs_text(
        v,
        &[
            (
                "long_name",
                &format!("{vk} (traced parameter, cell centres)"),
            ),
            ("units", vary_p.unit()),
            ("axis", "Y"),
            ("bounds", &bdim),
        ],
    );
    let v = nc.add_var_f64(&bdim, &[&vdim, "nv"], bnds)?;
    nc.var_attrs_text(
        v,
        &[
            ("long_name", &format!("{vk} at the edges of each cell")),
            ("units", vary_p.unit()),
        ],
    );
    let v = nc.add_var_i32("climate", &["climate"], (1..=nclim as i32).collect())?;
    nc.var_attrs_text(
        v,
        &[
            (
                "long_name",
                "number of the stable climate within its cell (warmest first)",
            ),
            ("units", "1"),
        ],
    );
    let meanings = "ice_free polar_caps equatorial_belt snowball other";
    let bits: Vec<i32> = STATES.iter().map(|s| state_bit(*s) as i32).collect();
    if named {
        model_variables(&mut nc, parts)?;
    }
    let v = nc.add_var_i32("regime", &cell2, regime)?;
    nc.var_attrs_text(
        v,
        &[
            (
                "long_name",
                "stable climates present (bit mask of their states)",
            ),
            ("units", "1"),
        ],
    );
    nc.var_attr_i32(v, "flag_masks", &bits);
    nc.var_attr_text(v, "flag_meanings", meanings);
    nc.var_attr_i32(v, "_FillValue", &[FILL_I32]);
    let v = nc.add_var_i32("stable_climates", &cell2, count)?;
    nc.var_attrs_text(
        v,
        &[
            ("long_name", "number of coexisting stable climates"),
            ("units", "1"),
        ],
    );
    nc.var_attr_i32(v, "_FillValue", &[FILL_I32]);
    let v = nc.add_var_i32("slice_failed", &model_slice_dims, flags)?;
    nc.var_attrs_text(
        v,
        &[
            (
                "long_name",
                "whether the slice failed (no branch traced; its cells are missing values)",
            ),
            ("units", "1"),
            ("flag_meanings", "computed failed"),
        ],
    );
    nc.var_attr_i32(v, "flag_values", &[0, 1]);
    for part in parts.iter() {
        let worst: Vec<f64> = part
            .slices
            .iter()
            .map(|s| s.worst.unwrap_or(FILL_F64))
            .collect();
        let var = match part.model {
            None => "slice_max_residual".to_string(),
            Some(m) => format!("slice_max_residual_{}", model_token(m)),
        };
        let mm = part.mm;
        let v = nc.add_var_f64(&var, &slice_dims, worst)?;
        let (unit, measure) = mm.residual();
        let of = part
            .model
            .map_or(String::new(), |m| format!(" of the {m} model"));
        nc.var_attrs_text(
            v,
            &[
                (
                    "long_name",
                    &format!("largest residual over the slice's traced points{of}: {measure}"),
                ),
                ("units", unit),
                (
                    "comment",
                    &format!(
                        "above the corrector tolerance where Newton reached the rounding floor of double precision (see map.csv {})",
                        residual_column(mm)
                    ),
                ),
            ],
        );
        nc.var_attr_f64(v, "_FillValue", &[FILL_F64]);
    }
    let v = nc.add_var_i32("state", &cell3, state)?;
    nc.var_attrs_text(
        v,
        &[
            ("long_name", "state of each stable climate of the cell"),
            ("units", "1"),
        ],
    );
    nc.var_attr_i32(v, "_FillValue", &[FILL_I32]);
    nc.var_attr_i32(v, "flag_values", &bits);
    nc.var_attr_text(v, "flag_meanings", meanings);
    let v = nc.add_var_f64("global_mean_temperature", &cell3, mean)?;
    nc.var_attr_f64(v, "_FillValue", &[FILL_F64]);
    nc.var_attrs_text(
        v,
        &[
            ("standard_name", "surface_temperature"),
            (
                "long_name",
                "global (area-weighted) mean surface temperature of each stable climate",
            ),
            ("units", "degC"),
            ("cell_methods", "area: mean"),
        ],
    );
    for (var, data, text) in [
        (
            "ice_edge_north_deg",
            north,
            "most poleward ice edge of the northern hemisphere of each stable climate (90 with no ice there, 0 when all of the hemisphere is ice)",
        ),
        (
            "ice_edge_south_deg",
            south,
            "most poleward ice edge of the southern hemisphere of each stable climate (-90 with no ice there, 0 when all of the hemisphere is ice)",
        ),
    ] {
        let v = nc.add_var_f64(var, &cell3, data)?;
        nc.var_attr_f64(v, "_FillValue", &[FILL_F64]);
        nc.var_attrs_text(v, &[("long_name", text), ("units", "degrees_north")]);
    }
    let v = nc.add_var_f64("habitable_fraction", &cell3, habitable)?;
    nc.var_attr_f64(v, "_FillValue", &[FILL_F64]);
    nc.var_attrs_text(
        v,
        &[
            (
                "long_name",
                "habitable fraction of the surface of each stable climate (area with habitability.min_c <= T <= habitability.max_c)",
            ),
            ("units", "1"),
            (
                "comment",
                "the temperature profile is taken piecewise linear between band centres; area is uniform in sin(latitude)",
            ),
        ],
    );
    nc.var_attr_f64(v, "valid_min", &[0.0]);
    nc.var_attr_f64(v, "valid_max", &[1.0]);
    nc.global_attr_text("Conventions", "CF-1.8");
    nc.global_attr_text("title", &format!("Regime map: {name}"));
    nc.global_attr_text("source", &format!("icefold {VERSION}"));
    nc.global_attr_text("history", history);
    let mms: Vec<&MapModel> = parts.iter().map(|p| p.mm).collect();
    let (what, model_attr, stability) = match (named, mms.first()) {
        (false, Some(mm)) => (
            match mm {
                MapModel::Annual(_) => "equilibria of the annual-mean model".to_string(),
                MapModel::Seasonal(_) => "periodic climates of the seasonal model (each reported by its annual-mean profile)".to_string(),
            },
            mm.name().to_string(),
            mm.stability().to_string(),
        ),
        _ => (
            "climates of each model of the hierarchy along the model dimension (equilibria of the annual-mean model, periodic climates of the seasonal ones, each reported by its annual-mean profile)".to_string(),
            format!(
                "hierarchy: {}",
                parts.iter().map(|p| p.model.unwrap_or("")).collect::<Vec<_>>().join(", ")
            ),
            parts
                .iter()
                .map(|p| format!("{}: {}", p.model.unwrap_or(""), p.mm.stability()))
                .collect::<Vec<_>>()
                .join("; "),
        ),
    };
    nc.global_attr_text("model", &model_attr);
    if let Some(n) = mms.iter().find_map(|mm| mm.steps_per_year()) {
        nc.global_attr_i32("steps_per_year", &[n as i32]);
    }
    nc.global_attr_text("stability", &stability);
    nc.global_attr_text(
        "comment",
        &format!(
            "{}: the {what}, traced by continuation in {vk}. The traced range is summarised on {} cells: the stable climates of a cell are the stable branch segments spanning its centre, each with the values of the traced point nearest the centre.",
            slices_phrase(spec),
            spec.cells
        ),
    );
    nc.global_attr_text("scenario", scenario_toml);
    Ok(nc)
}

/// A model's name as a NetCDF name part and flag meaning:
/// "seasonal-sea-ice" as "seasonal_sea_ice".
fn model_token(name: &str) -> String {
    name.chars()
        .map(|c| if c.is_ascii_alphanumeric() { c } else { '_' })
        .collect()
}

/// The `model` coordinate of a hierarchy map (1, 2, ... with the models'
/// names as `flag_meanings`) and `steps_per_year(model)` (fill for the
/// annual-mean model).
fn model_variables(nc: &mut NcFile, parts: &[NcPart]) -> Result<(), CliError> {
    let numbers: Vec<i32> = (1..=parts.len() as i32).collect();
    let v = nc.add_var_i32("model", &["model"], numbers.clone())?;
    nc.var_attrs_text(
        v,
        &[("long_name", "model of the hierarchy"), ("units", "1")],
    );
    nc.var_attr_i32(v, "flag_values", &numbers);
    let meanings: Vec<String> = parts
        .iter()
        .map(|p| model_token(p.model.unwrap_or("")))
        .collect();
    nc.var_attr_text(v, "flag_meanings", &meanings.join(" "));
    let steps: Vec<i32> = parts
        .iter()
        .map(|p| p.mm.steps_per_year().map_or(FILL_I32, |n| n as i32))
        .collect();
    let v = nc.add_var_i32("steps_per_year", &["model"], steps)?;
    nc.var_attrs_text(
        v,
        &[
            (
                "long_name",
                "implicit time steps per year of the model (missing: the annual-mean model)",
            ),
            ("units", "1"),
        ],
    );
    nc.var_attr_i32(v, "_FillValue", &[FILL_I32]);
    Ok(())
}

/// How the slices are laid out, for the global `comment`: "One slice per
/// value of KEY" for one across key, else the product of the keys.
fn slices_phrase(spec: &MapSpec) -> String {
    if spec.more.is_empty() {
        return format!("One slice per value of {}", spec.across);
    }
    let keys: Vec<&str> = std::iter::once(spec.across.as_str())
        .chain(spec.more.iter().map(|a| a.key.as_str()))
        .collect();
    format!(
        "One slice per combination of {} (slices in the order of the across dimensions, the first slowest)",
        keys.join(", ")
    )
}
