//! Analytic Jacobian and parameter derivatives against central differences
//! (common practice, no source), for every law combination.
mod common;

use icefold::model::{Model, Param};

fn profiles(m: &Model) -> Vec<Vec<f64>> {
    (0..6)
        .map(|k| {
            let k = k as f64;
            m.grid
                .centres
                .iter()
                .map(|x| 28.0 - (45.0 + 5.0 * k) * x * x + 2.0 * (5.0 * x + k).sin() - 2.0 * k)
                .collect()
        })
        .collect()
}

const CASES: &[&[&str]] = &[
    &[],
    &["grid.spacing=\"latitude\"", "grid.bands=37"],
    &["albedo.kind=\"smooth\"", "albedo.width=3"],
    &["transport.kind=\"relaxation\""],
    &[
        "radiation.kind=\"greybody\"",
        "radiation.emissivity=0.6",
        "orbit.flux=1600",
    ],
    &["grid.symmetric=true", "grid.bands=30"],
    &[
        "insolation.kind=\"orbital\"",
        "orbit.obliquity=70",
        "grid.bands=41",
    ],
];

#[test]
fn jacobian_matches_central_differences() {
    for sets in CASES {
        let m = common::classic(sets);
        let n = m.len();
        let mut j = m.new_jacobian();
        let (mut f, mut fp, mut fm) = (vec![0.0; n], vec![0.0; n], vec![0.0; n]);
        for t in profiles(&m) {
            m.evaluate(&t, &mut f, Some(&mut j));
            for c in 0..n {
                let h = 1e-6;
                let mut tp = t.clone();
                tp[c] += h;
                let mut tm = t.clone();
                tm[c] -= h;
                m.evaluate(&tp, &mut fp, None);
                m.evaluate(&tm, &mut fm, None);
                for r in 0..n {
                    let fd = (fp[r] - fm[r]) / (2.0 * h);
                    let an = j.entry(r, c);
                    assert!(
                        (fd - an).abs() < 1e-5 * (1.0 + an.abs()),
                        "{sets:?} J[{r}][{c}]: analytic {an} fd {fd}"
                    );
                }
            }
        }
    }
}

#[test]
fn parameter_derivatives_match_central_differences() {
    for sets in CASES {
        let mut m = common::classic(sets);
        let n = m.len();
        let t = profiles(&m)[1].clone();
        let (mut d, mut s, mut fp, mut fm) =
            (vec![0.0; n], vec![0.0; n], vec![0.0; n], vec![0.0; n]);
        for p in Param::ALL {
            if !m.has_param(p) {
                continue;
            }
            m.d_residual_d_param(p, &t, &mut d, &mut s);
            let v0 = m.param(p);
            let h = 1e-5 * v0.abs().max(1.0);
            m.set_param(p, v0 + h);
            m.evaluate(&t, &mut fp, None);
            m.set_param(p, v0 - h);
            m.evaluate(&t, &mut fm, None);
            m.set_param(p, v0);
            for i in 0..n {
                let fd = (fp[i] - fm[i]) / (2.0 * h);
                assert!(
                    (fd - d[i]).abs() < 1e-4 * (1.0 + fd.abs()),
                    "{sets:?} {}: band {i} fd {fd} vs {}",
                    p.key(),
                    d[i]
                );
            }
        }
    }
}
