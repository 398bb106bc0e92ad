//! Maps over more than one `--across` key: a product sweep equals the
//! single-key maps of each fixed combination of the other keys, its shards
//! merge to the same bytes in any order, bad input is refused with one
//! line, and the slices are handed on in order within a bounded window.
mod common;

use common::{icefold, temp_dir};
use icefold::analysis::ordered::{OrderedStop, run_ordered};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicUsize, Ordering};

/// The small grid every map of this file uses.
const SMALL: [&str; 4] = ["--set", "grid.bands=18", "--cells", "24"];

/// The three across keys of the product sweep (first slowest).
const ACROSS: [&str; 3] = [
    "orbit.obliquity=0:90:3",
    "radiation.co2_ppm=280:560:2",
    "transport.diffusivity=0.45:0.65:2",
];

fn run_ok(args: &[&str]) -> String {
    let (code, out, err) = icefold(args);
    assert_eq!(code, 0, "icefold {args:?}: {err}");
    out
}

/// The 3-key map into `out`, with `extra` options.
fn map3(out: &Path, extra: &[&str]) {
    let mut a: Vec<&str> = vec!["map", "-q"];
    for k in ACROSS {
        a.extend(["--across", k]);
    }
    a.extend(SMALL);
    a.extend(extra);
    let o = out.to_str().unwrap();
    a.extend(["--out", o]);
    run_ok(&a);
}

fn csv_rows(path: &Path) -> (Vec<String>, Vec<Vec<String>>) {
    let text = std::fs::read_to_string(path).unwrap();
    let mut lines = text.lines();
    let head: Vec<String> = lines.next().unwrap().split(',').map(String::from).collect();
    let rows = lines
        .map(|l| l.split(',').map(String::from).collect())
        .collect();
    (head, rows)
}

fn nc_i32(path: &Path, var: &str) -> (Vec<String>, Vec<i32>) {
    let mut r = netcdf3::FileReader::open(path).unwrap();
    let dims = r.data_set().get_var(var).unwrap().dim_names();
    let v = r.read_var_i32(var).unwrap();
    (dims, v)
}

fn nc_f64(path: &Path, var: &str) -> Vec<f64> {
    let mut r = netcdf3::FileReader::open(path).unwrap();
    r.read_var_f64(var).unwrap()
}

/// Every file of a map directory, by name.
fn files(dir: &Path) -> Vec<(String, Vec<u8>)> {
    let mut v: Vec<(String, Vec<u8>)> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| {
            let p = e.unwrap().path();
            (
                p.file_name().unwrap().to_string_lossy().into_owned(),
                std::fs::read(&p).unwrap(),
            )
        })
        .collect();
    v.sort();
    v
}

/// Each (CO2, diffusivity) combination of a 3-key sweep equals the
/// single-key map in obliquity with those two keys set in the scenario
/// (`--set`): the same map.csv rows, the same boundaries (slice-joined
/// and fold curves, continued in the first key), and the same
/// cells in map.nc, element by element. An independent computation path:
/// the single-key map sets the values through the scenario, the sweep
/// through the slice grid (common practice, no source).
#[test]
fn product_sweep_equals_single_key_maps() {
    let dir = temp_dir("nd-product");
    let all = dir.join("all");
    map3(&all, &["--fold-curves"]);
    let (head, rows) = csv_rows(&all.join("map.csv"));
    assert_eq!(
        &head[..4],
        [
            "orbit.obliquity",
            "radiation.co2_ppm",
            "transport.diffusivity",
            "branch"
        ]
    );
    let (bhead, brows) = csv_rows(&all.join("boundaries.csv"));
    assert_eq!(
        bhead,
        [
            "curve",
            "method",
            "transition",
            "orbit.obliquity",
            "radiation.co2_ppm",
            "transport.diffusivity",
            "orbit.flux"
        ]
    );
    let nc = all.join("map.nc");
    let (dims, regime) = nc_i32(&nc, "regime");
    assert_eq!(
        dims,
        [
            "orbit_flux",
            "orbit_obliquity",
            "radiation_co2_ppm",
            "transport_diffusivity"
        ]
    );
    let (sdims, state) = nc_i32(&nc, "state");
    assert_eq!(&sdims[..4], &dims[..]);
    let (_, count) = nc_i32(&nc, "stable_climates");
    let mean = nc_f64(&nc, "global_mean_temperature");
    let failed = nc_i32(&nc, "slice_failed");
    assert_eq!(
        failed.0,
        [
            "orbit_obliquity",
            "radiation_co2_ppm",
            "transport_diffusivity"
        ]
    );
    let co2s = nc_f64(&nc, "radiation_co2_ppm");
    let ds = nc_f64(&nc, "transport_diffusivity");
    assert_eq!(co2s, [280.0, 560.0]);
    assert_eq!(ds.len(), 2);
    let (cells, n0, n1, n2) = (24, 3, 2, 2);
    let p = n0 * n1 * n2;
    let nclim = state.len() / (cells * p);
    let mut compared = 0;
    for (i1, co2) in co2s.iter().enumerate() {
        for (i2, d) in ds.iter().enumerate() {
            let (co2t, dt) = (format!("{co2}"), format!("{d}"));
            let one = dir.join(format!("one-{i1}-{i2}"));
            let mut a: Vec<&str> = vec!["map", "-q", "--across", ACROSS[0]];
            let s1 = format!("radiation.co2_ppm={co2t}");
            let s2 = format!("transport.diffusivity={dt}");
            a.extend(["--set", &s1, "--set", &s2, "--fold-curves"]);
            a.extend(SMALL);
            let o = one.to_str().unwrap().to_string();
            a.extend(["--out", &o]);
            run_ok(&a);
            // map.csv: the sweep's rows of this combination, without the
            // two further key columns, are the single-key map's rows
            let (h1, r1) = csv_rows(&one.join("map.csv"));
            let mut want_head = vec![head[0].clone()];
            want_head.extend(head[3..].iter().cloned());
            assert_eq!(h1, want_head);
            let mine: Vec<Vec<String>> = rows
                .iter()
                .filter(|r| r[1] == co2t && r[2] == dt)
                .map(|r| {
                    let mut v = vec![r[0].clone()];
                    v.extend(r[3..].iter().cloned());
                    v
                })
                .collect();
            assert!(!mine.is_empty());
            assert_eq!(mine, r1, "map.csv at co2 {co2t}, D {dt}");
            // boundaries.csv, curve numbers aside
            let (_, b1) = csv_rows(&one.join("boundaries.csv"));
            let strip = |r: &Vec<String>| r[1..].to_vec();
            let bmine: Vec<Vec<String>> = brows
                .iter()
                .filter(|r| r[4] == co2t && r[5] == dt)
                .map(|r| {
                    let mut v = r[1..4].to_vec();
                    v.push(r[6].clone());
                    v
                })
                .collect();
            let b1: Vec<Vec<String>> = b1.iter().map(strip).collect();
            assert_eq!(bmine, b1, "boundaries at co2 {co2t}, D {dt}");
            // map.nc cells
            let onenc = one.join("map.nc");
            let (_, reg1) = nc_i32(&onenc, "regime");
            let (_, cnt1) = nc_i32(&onenc, "stable_climates");
            let (_, st1) = nc_i32(&onenc, "state");
            let mean1 = nc_f64(&onenc, "global_mean_temperature");
            let nclim1 = st1.len() / (cells * n0);
            for c in 0..cells {
                for i0 in 0..n0 {
                    let j = (i0 * n1 + i1) * n2 + i2;
                    assert_eq!(regime[c * p + j], reg1[c * n0 + i0]);
                    assert_eq!(count[c * p + j], cnt1[c * n0 + i0]);
                    for k in 0..nclim {
                        let at = (c * p + j) * nclim + k;
                        if k < nclim1 {
                            let at1 = (c * n0 + i0) * nclim1 + k;
                            assert_eq!(state[at], st1[at1]);
                            assert_eq!(mean[at].to_bits(), mean1[at1].to_bits());
                        } else {
                            assert_eq!(state[at], icefold::io::netcdf::FILL_I32);
                        }
                    }
                    compared += 1;
                }
            }
        }
    }
    assert_eq!(compared, cells * p);
    let _ = std::fs::remove_dir_all(&dir);
}

/// Shards of a 3-key sweep (slices K, K+N, ... of the flattened product)
/// merged in any order give exactly the files of one run, and so do other
/// thread counts (common practice, no source).
#[test]
fn shards_of_a_product_merge_to_the_same_bytes() {
    let dir = temp_dir("nd-shards");
    let single = dir.join("single");
    map3(&single, &["--threads", "2"]);
    let want = files(&single);
    for t in ["1", "3"] {
        let other = dir.join(format!("threads-{t}"));
        map3(&other, &["--threads", t]);
        assert_eq!(files(&other), want, "--threads {t}");
    }
    let n = 5;
    let mut shard_files: Vec<PathBuf> = Vec::new();
    for k in 0..n {
        let d = dir.join(format!("s{k}"));
        let sh = format!("{k}/{n}");
        map3(&d, &["--shard", &sh]);
        shard_files.push(d.join(format!("shard-{k}-of-{n}.json")));
    }
    for (t, order) in [[0, 1, 2, 3, 4], [4, 2, 0, 3, 1], [3, 4, 1, 0, 2]]
        .iter()
        .enumerate()
    {
        let merged = dir.join(format!("merged{t}"));
        let mut a: Vec<String> = vec!["merge".into(), "-q".into()];
        a.extend(order.iter().map(|&k| shard_files[k].display().to_string()));
        a.extend(["--out".into(), merged.display().to_string()]);
        let a: Vec<&str> = a.iter().map(String::as_str).collect();
        run_ok(&a);
        assert_eq!(files(&merged), want, "merge order {order:?}");
    }
    // a shard whose further-key value was edited is refused, naming it
    let text = std::fs::read_to_string(&shard_files[1]).unwrap();
    let mut v: serde_json::Value = serde_json::from_str(&text).unwrap();
    v["slices"][0]["more"][0] = serde_json::json!(300.0);
    let bad = dir.join("bad");
    std::fs::create_dir_all(&bad).unwrap();
    let f = bad.join("shard-1-of-5.json");
    std::fs::write(&f, v.to_string()).unwrap();
    let out = dir.join("bad-out");
    let (code, _, err) = icefold(&["merge", f.to_str().unwrap(), "--out", out.to_str().unwrap()]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("slices[0].more"), "{err}");
    assert!(!out.exists());
    let _ = std::fs::remove_dir_all(&dir);
}

/// Bad combinations of `--across`: one line on stderr naming the option
/// and the value, exit 2, nothing written (common practice, no source).
#[test]
fn bad_across_combinations_exit_2() {
    let dir = temp_dir("nd-bad");
    let out = dir.join("out");
    let o = out.to_str().unwrap();
    let cases: [(&[&str], &str); 4] = [
        (
            &[
                "--across",
                "orbit.obliquity=0:90:3",
                "--across",
                "orbit.obliquity=10:20:2",
            ],
            "given twice",
        ),
        (
            &[
                "--across",
                "orbit.obliquity=0:90:3",
                "--across",
                "orbit.flux=1300:1400:2",
            ],
            "--across and --vary are both `orbit.flux`",
        ),
        (
            &[
                "--across",
                "orbit.obliquity=0:90:2",
                "--across",
                "radiation.co2_ppm=280:560:2",
                "--across",
                "transport.diffusivity=0.4:0.6:2",
                "--across",
                "albedo.ice=0.5:0.6:2",
                "--across",
                "albedo.open=0.3:0.32:2",
            ],
            "--across given 5 times",
        ),
        (
            &[
                "--across",
                "orbit.obliquity=0:90:1000",
                "--across",
                "radiation.co2_ppm=280:560:1001",
            ],
            "over 1000000 slices",
        ),
    ];
    for (extra, want) in cases {
        let mut a: Vec<&str> = vec!["map"];
        a.extend(extra);
        a.extend(["--out", o]);
        let (code, _, err) = icefold(&a);
        assert_eq!(code, 2, "{a:?}: {err}");
        assert!(err.contains(want), "{a:?}: {err}");
        assert_eq!(err.trim().lines().count(), 1, "{err}");
        assert!(!out.exists());
    }
    let _ = std::fs::remove_dir_all(&dir);
}

/// Items are handed on in input order whatever the threads, and the
/// finished results held never exceed the window (common practice, no
/// source).
#[test]
fn ordered_results_within_the_window() {
    let items: Vec<usize> = (0..60).collect();
    for threads in [1, 2, 5] {
        let mut got = Vec::new();
        let st = run_ordered(
            &items,
            threads,
            3,
            |&i| {
                // uneven work, so results finish out of order
                let n = (i * 7919) % 13;
                std::thread::sleep(std::time::Duration::from_micros(50 * n as u64));
                Some(i * i)
            },
            |r| {
                got.push(r);
                Ok::<(), ()>(())
            },
        )
        .unwrap();
        let want: Vec<usize> = items.iter().map(|i| i * i).collect();
        assert_eq!(got, want);
        assert_eq!(st.handed, 60);
        assert!(st.peak_held <= 3, "{st:?}");
    }
}

/// A cancelled item and a refusing sink stop the run (common practice, no
/// source).
#[test]
fn ordered_run_stops() {
    let items: Vec<usize> = (0..20).collect();
    let r = run_ordered(
        &items,
        2,
        4,
        |&i| (i != 5).then_some(i),
        |_| Ok::<(), ()>(()),
    );
    assert_eq!(r, Err(OrderedStop::Cancelled));
    let r = run_ordered(
        &items,
        2,
        4,
        |&i| Some(i),
        |i| if i == 7 { Err("seven") } else { Ok(()) },
    );
    assert_eq!(r, Err(OrderedStop::Sink("seven")));
}

/// A panic in the work of one item, or in the sink, reaches the caller
/// (the run neither hangs nor loses it) (common practice, no source).
#[test]
fn ordered_run_passes_panics_on() {
    let items: Vec<usize> = (0..50).collect();
    let r = std::panic::catch_unwind(|| {
        run_ordered(
            &items,
            2,
            3,
            |&i| {
                assert!(i != 9, "item nine");
                Some(i)
            },
            |_| Ok::<(), ()>(()),
        )
    });
    let msg = r.unwrap_err();
    let text = msg
        .downcast_ref::<String>()
        .cloned()
        .or_else(|| msg.downcast_ref::<&str>().map(|s| s.to_string()))
        .unwrap_or_default();
    assert!(text.contains("item nine"), "{text}");
    let r = std::panic::catch_unwind(|| {
        run_ordered(
            &items,
            2,
            3,
            |&i| Some(i),
            |i| {
                assert!(i != 4, "sink four");
                Ok::<(), ()>(())
            },
        )
    });
    assert!(r.is_err());
}

/// A payload that counts how many of its kind are alive.
struct Counted(&'static AtomicUsize);

impl Counted {
    fn new(live: &'static AtomicUsize, peak: &'static AtomicUsize) -> Self {
        let n = live.fetch_add(1, Ordering::SeqCst) + 1;
        peak.fetch_max(n, Ordering::SeqCst);
        Counted(live)
    }
}

impl Drop for Counted {
    fn drop(&mut self) {
        self.0.fetch_sub(1, Ordering::SeqCst);
    }
}

/// The results alive at once (finished and not yet consumed, or being
/// consumed) stay within window + threads whether there are 2 items or
/// 400: the number held does not grow with the number of items (common
/// practice, no source).
#[test]
fn results_held_do_not_grow_with_items() {
    static LIVE: AtomicUsize = AtomicUsize::new(0);
    static PEAK: AtomicUsize = AtomicUsize::new(0);
    let (threads, window) = (3, 6);
    for n in [2usize, 400] {
        PEAK.store(0, Ordering::SeqCst);
        let items: Vec<usize> = (0..n).collect();
        let mut handed = 0;
        run_ordered(
            &items,
            threads,
            window,
            |&i| {
                // the item just after each multiple of 17 is slow, so the
                // others pile up behind it as far as the window lets them
                if i % 17 == 1 {
                    std::thread::sleep(std::time::Duration::from_millis(3));
                }
                Some(Counted::new(&LIVE, &PEAK))
            },
            |c| {
                handed += 1;
                drop(c);
                Ok::<(), ()>(())
            },
        )
        .unwrap();
        assert_eq!(handed, n);
        assert_eq!(LIVE.load(Ordering::SeqCst), 0);
        let peak = PEAK.load(Ordering::SeqCst);
        assert!(peak <= window + threads, "{n} items: {peak} alive at once");
        if n == 400 {
            // the slow items did make results wait
            assert!(peak >= 2, "{peak}");
        }
    }
}

/// Peak resident memory (VmHWM) of a map of 2 slices and of 200 slices,
/// each run in a child process of this test: the growth is at most twice
/// the growth of the output files plus 4 MiB (the outputs are staged in
/// memory until they are published, so they are held once; the traced
/// branches of finished slices are not). Before the slices were streamed
/// the growth was about four times the output (a measurement of this
/// session: 24 MiB for 5.8 MB of output) (common practice, no source).
#[cfg(target_os = "linux")]
#[test]
fn peak_memory_grows_with_the_output_only() {
    const CHILD: &str = "ICEFOLD_MAP_ND_RSS_CHILD";
    if let Ok(spec) = std::env::var(CHILD) {
        // the child: one map in this process, then its peak memory
        let (n, out) = spec.split_once(' ').unwrap();
        let across = format!("orbit.obliquity=0:90:{n}");
        let mut argv: Vec<&str> = vec!["icefold", "map", "-q", "--across", &across];
        argv.extend(["--set", "grid.bands=18", "--cells", "40", "--threads", "2"]);
        argv.extend(["--out", out]);
        use clap::Parser;
        let cli = icefold::cli::args::Cli::try_parse_from(&argv).unwrap();
        let args = cli.into_args(argv.join(" ")).unwrap();
        icefold::cli::run(&args).unwrap();
        let status = std::fs::read_to_string("/proc/self/status").unwrap();
        let hwm = status
            .lines()
            .find_map(|l| l.strip_prefix("VmHWM:"))
            .unwrap()
            .trim()
            .trim_end_matches("kB")
            .trim()
            .to_string();
        println!("VMHWM_KB={hwm}");
        return;
    }
    let dir = temp_dir("nd-rss");
    let measure = |n: usize| -> (u64, u64) {
        let out = dir.join(format!("m{n}"));
        let o = std::process::Command::new(std::env::current_exe().unwrap())
            .args([
                "--exact",
                "peak_memory_grows_with_the_output_only",
                "--nocapture",
                "--test-threads",
                "1",
            ])
            .env(CHILD, format!("{n} {}", out.display()))
            .output()
            .unwrap();
        let text = String::from_utf8_lossy(&o.stdout);
        // (the harness prints the test's name on the same line)
        let kb: u64 = text
            .split("VMHWM_KB=")
            .nth(1)
            .and_then(|t| t.split_whitespace().next())
            .unwrap_or_else(|| panic!("child printed no VmHWM: {text}"))
            .parse()
            .unwrap();
        let bytes: u64 = files(&out).iter().map(|(_, b)| b.len() as u64).sum();
        (kb * 1024, bytes)
    };
    let (rss2, out2) = measure(2);
    let (rss200, out200) = measure(200);
    let grew = rss200.saturating_sub(rss2);
    let output = out200 - out2;
    println!(
        "peak memory: 2 slices {rss2} B, 200 slices {rss200} B; output {out2} B and {out200} B"
    );
    assert!(
        grew <= 2 * output + (4 << 20),
        "peak memory grew by {grew} bytes from 2 to 200 slices, the output by {output} bytes"
    );
    let _ = std::fs::remove_dir_all(&dir);
}
