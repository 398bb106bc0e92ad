//! Output sets appear whole or not at all: kill -9 at random moments, two
//! runs into one directory, planted locks, stale staging, foreign files,
//! a full disk, concurrent shards. The expectations are the promises of
//! the README ("a command's outputs appear all together or not at all");
//! the checks compare files byte for byte with complete runs (common
//! practice, no source).
mod common;

use common::{icefold, temp_dir};
use std::collections::BTreeMap;
use std::fs;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::Duration;

/// Every regular file under `dir` (relative path -> bytes).
fn snapshot(dir: &Path) -> BTreeMap<PathBuf, Vec<u8>> {
    let mut m = BTreeMap::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in fs::read_dir(&d).unwrap().flatten() {
            let p = e.path();
            if p.is_dir() {
                stack.push(p);
            } else {
                m.insert(
                    p.strip_prefix(dir).unwrap().to_path_buf(),
                    fs::read(&p).unwrap(),
                );
            }
        }
    }
    m
}

/// Hidden staging, set-aside or lock entries of `name` beside it.
fn leftovers(parent: &Path, name: &str) -> Vec<String> {
    fs::read_dir(parent)
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with(&format!(".{name}.")))
        .collect()
}

/// Starts icefold with `args` (stdout discarded, stderr kept).
fn spawn(args: &[&str]) -> std::process::Child {
    Command::new(env!("CARGO_BIN_EXE_icefold"))
        .args(args)
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap()
}

/// Waits for every run and asserts each succeeded.
fn all_succeed(runs: Vec<std::process::Child>) {
    for r in runs {
        let out = r.wait_with_output().unwrap();
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(0), "{err}");
    }
}

/// Runs `new_args` then `old_args` to completion into `parent/name` (the
/// complete new and old sets), then kills `new_args` at `trials` moments
/// (`delay(k)` ms after its start): each time the directory must hold the
/// old set or the new one whole (after a new one, `old_args` restores the
/// old). At least one trial must be killed before publishing; a final
/// complete run publishes the new set and leaves nothing behind.
fn kill_trials(
    parent: &Path,
    name: &str,
    args: impl Fn(&str) -> (Vec<String>, Vec<String>),
    trials: u64,
    delay: impl Fn(u64) -> u64,
) {
    fs::create_dir_all(parent).unwrap();
    let dir = parent.join(name);
    let (new_args, old_args) = args(dir.to_str().unwrap());
    let new_args: Vec<&str> = new_args.iter().map(String::as_str).collect();
    let old_args: Vec<&str> = old_args.iter().map(String::as_str).collect();
    let complete = |a: &[&str]| {
        let (c, _, e) = icefold(a);
        assert_eq!(c, 0, "{e}");
        snapshot(&dir)
    };
    let new = complete(&new_args);
    let old = complete(&old_args);
    assert_ne!(old, new);
    let mut before = 0;
    for k in 0..trials {
        let mut child = spawn(&new_args);
        std::thread::sleep(Duration::from_millis(delay(k)));
        let _ = child.kill();
        let _ = child.wait();
        let now = snapshot(&dir);
        if now == old {
            before += 1;
        } else if now == new {
            complete(&old_args);
        } else {
            panic!(
                "trial {k}: a mix of old and new files: {:?}",
                now.keys().collect::<Vec<_>>()
            );
        }
    }
    assert!(before > 0, "no trial was killed before publishing");
    assert_eq!(complete(&new_args), new);
    assert_eq!(leftovers(parent, name), Vec::<String>::new());
    let _ = fs::remove_dir_all(parent);
}

fn dead_pid() -> u32 {
    let mut c = Command::new("true").spawn().unwrap();
    let pid = c.id();
    c.wait().unwrap();
    pid
}

fn host() -> String {
    let h = fs::read_to_string("/proc/sys/kernel/hostname").unwrap_or_default();
    h.trim()
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '.' {
                c
            } else {
                '_'
            }
        })
        .collect()
}

#[test]
fn kill_9_leaves_the_old_set_or_the_new_one_never_a_mix() {
    // a map of 6 slices (about 0.2 to 0.5 s) over one of 2; killed at 16
    // moments spread over its run time, some before publishing, some
    // possibly after
    let map = |count: &str, d: &str| -> Vec<String> {
        let across = format!("orbit.obliquity=0:90:{count}");
        [
            "map",
            "--across",
            &across,
            "--threads",
            "1",
            "--out",
            d,
            "--quiet",
        ]
        .map(String::from)
        .to_vec()
    };
    kill_trials(
        &temp_dir("kill9"),
        "m",
        |d| (map("6", d), map("2", d)),
        16,
        |k| 20 + 40 * k,
    );
}

/// The same for a long `run` (a time integration; 40 model years, about
/// a second) over a run of 2 years.
#[test]
fn kill_9_during_a_long_run_never_mixes_sets() {
    let run = |years: &str, d: &str| -> Vec<String> {
        ["run", "--years", years, "--out", d, "--quiet"]
            .map(String::from)
            .to_vec()
    };
    kill_trials(
        &temp_dir("kill9run"),
        "r",
        |d| (run("40", d), run("2", d)),
        10,
        |k| 30 + 100 * k,
    );
}

#[test]
fn two_runs_into_one_directory_publish_one_after_the_other() {
    let parent = temp_dir("concurrent");
    let dir = parent.join("s");
    let d = dir.to_str().unwrap().to_string();
    all_succeed(
        (0..4)
            .map(|_| spawn(&["solve", "--out", &d, "--quiet"]))
            .collect(),
    );
    let (c, _, e) = icefold(&["solve", "--out", &d, "--quiet"]);
    assert_eq!(c, 0, "{e}");
    let one = snapshot(&dir);
    assert!(
        one.contains_key(Path::new("profile.csv")),
        "{:?}",
        one.keys()
    );
    assert_eq!(leftovers(&parent, "s"), Vec::<String>::new());
    let _ = fs::remove_dir_all(&parent);
}

#[test]
fn a_live_lock_makes_the_second_run_fail_clearly_and_a_dead_one_is_cleared() {
    let parent = temp_dir("lock");
    fs::create_dir_all(&parent).unwrap();
    let dir = parent.join("s");
    let d = dir.to_str().unwrap();
    // a lock held by this (live) test process: the run waits, then fails
    // naming the holder, and writes nothing
    let lock = parent.join(".s.lock");
    fs::write(&lock, format!("{}-{}\n", host(), std::process::id())).unwrap();
    let out = Command::new(env!("CARGO_BIN_EXE_icefold"))
        .args(["solve", "--out", d, "--quiet"])
        .env("ICEFOLD_LOCK_WAIT", "0.3")
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(err.contains("another icefold run"), "{err}");
    assert_eq!(err.trim().lines().count(), 1, "{err}");
    assert!(!dir.exists());
    // a symbolic link planted at the lock name is not followed to write
    fs::remove_file(&lock).unwrap();
    let target = parent.join("target.txt");
    fs::write(&target, "keep\n").unwrap();
    std::os::unix::fs::symlink(&target, &lock).unwrap();
    let out = Command::new(env!("CARGO_BIN_EXE_icefold"))
        .args(["solve", "--out", d, "--quiet"])
        .env("ICEFOLD_LOCK_WAIT", "0.2")
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert_eq!(fs::read_to_string(&target).unwrap(), "keep\n");
    fs::remove_file(&lock).unwrap();
    // a lock, a staging directory and a set-aside set of a dead process
    let dead = format!("{}-{}", host(), dead_pid());
    fs::write(&lock, format!("{dead}\n")).unwrap();
    let stage = parent.join(format!(".s.stage-{dead}-abcdef"));
    fs::create_dir_all(&stage).unwrap();
    fs::write(stage.join("profile.csv"), "half").unwrap();
    let (c, _, e) = icefold(&["solve", "--out", d, "--quiet"]);
    assert_eq!(c, 0, "{e}");
    assert!(dir.join("profile.csv").exists());
    assert_eq!(leftovers(&parent, "s"), Vec::<String>::new());
    // a crash between the fallback's two renames: --out missing, the old
    // set aside; the next run puts it back before replacing it
    let good = snapshot(&dir);
    let aside = parent.join(format!(".s.old-{dead}-0001"));
    fs::rename(&dir, &aside).unwrap();
    let (c, _, e) = icefold(&["solve", "--out", d, "--quiet"]);
    assert_eq!(c, 0, "{e}");
    assert_eq!(snapshot(&dir), good);
    assert_eq!(leftovers(&parent, "s"), Vec::<String>::new());
    let _ = fs::remove_dir_all(&parent);
}

#[test]
fn a_directory_with_foreign_files_or_a_bad_out_is_refused_and_kept() {
    let parent = temp_dir("foreign");
    let dir = parent.join("s");
    fs::create_dir_all(&dir).unwrap();
    fs::write(dir.join("notes.txt"), "mine\n").unwrap();
    let d = dir.to_str().unwrap();
    let (c, _, e) = icefold(&["solve", "--out", d, "--quiet"]);
    assert_eq!(c, 2, "{e}");
    assert!(e.contains("notes.txt") && e.contains(d), "{e}");
    assert_eq!(fs::read_to_string(dir.join("notes.txt")).unwrap(), "mine\n");
    assert_eq!(fs::read_dir(&dir).unwrap().count(), 1);
    // an earlier set is replaced whole: its files are icefold's
    fs::remove_file(dir.join("notes.txt")).unwrap();
    let (c, _, e) = icefold(&["solve", "--out", d, "--quiet"]);
    assert_eq!(c, 0, "{e}");
    let (c, _, e) = icefold(&["solve", "--out", d, "--quiet"]);
    assert_eq!(c, 0, "{e}");
    // with an earlier set's manifest there, a foreign file is refused
    // before computing: a 2000-year run returns at once, exit 2
    fs::write(dir.join("notes.txt"), "mine\n").unwrap();
    let (c, _, e) = icefold(&["run", "--years", "2000", "--out", d, "--quiet"]);
    assert_eq!(c, 2, "{e}");
    assert!(e.contains("notes.txt"), "{e}");
    assert_eq!(fs::read_to_string(dir.join("notes.txt")).unwrap(), "mine\n");
    // a file, not a directory
    let f = parent.join("file");
    fs::write(&f, "x").unwrap();
    let (c, _, e) = icefold(&["solve", "--out", f.to_str().unwrap(), "--quiet"]);
    assert_eq!(c, 2, "{e}");
    assert_eq!(fs::read_to_string(&f).unwrap(), "x");
    for bad in ["", ".", "..", "/"] {
        let (c, _, e) = icefold(&["solve", "--out", bad, "--quiet"]);
        assert_eq!(c, 2, "--out {bad:?}: {e}");
        assert_eq!(e.trim().lines().count(), 1, "{e}");
    }
    let _ = fs::remove_dir_all(&parent);
}

#[test]
fn concurrent_shards_share_one_directory() {
    let parent = temp_dir("shards");
    let dir = parent.join("shards");
    let d = dir.to_str().unwrap().to_string();
    let n = 4;
    all_succeed(
        (0..n)
            .map(|k| {
                let shard = format!("{k}/{n}");
                spawn(&[
                    "map",
                    "--across",
                    "orbit.obliquity=0:90:8",
                    "--threads",
                    "1",
                    "--shard",
                    &shard,
                    "--out",
                    &d,
                    "--quiet",
                ])
            })
            .collect(),
    );
    let names: Vec<String> = snapshot(&dir)
        .keys()
        .map(|p| p.to_string_lossy().into_owned())
        .collect();
    let want: Vec<String> = (0..n).map(|k| format!("shard-{k}-of-{n}.json")).collect();
    assert_eq!(names, want);
    let merged = parent.join("map");
    let (c, _, e) = icefold(&["merge", &d, "--out", merged.to_str().unwrap(), "--quiet"]);
    assert_eq!(c, 0, "{e}");
    assert!(merged.join("map.nc").exists());
    let _ = fs::remove_dir_all(&parent);
}

/// A full disk (a 2 MiB tmpfs; needs root, else skipped with a message):
/// the run fails with exit 1 naming the file system error, the old set
/// stays whole and nothing else is left.
#[test]
fn a_full_disk_keeps_the_old_set() {
    let mnt = temp_dir("tmpfs");
    fs::create_dir_all(&mnt).unwrap();
    let ok = Command::new("mount")
        .args([
            "-t",
            "tmpfs",
            "-o",
            "size=2m",
            "tmpfs",
            mnt.to_str().unwrap(),
        ])
        .stderr(Stdio::null())
        .status()
        .is_ok_and(|s| s.success());
    if !ok {
        eprintln!("skipped: cannot mount a tmpfs (not root?)");
        return;
    }
    let dir = mnt.join("s");
    let d = dir.to_str().unwrap();
    let (c, _, e) = icefold(&["solve", "--out", d, "--quiet"]);
    assert_eq!(c, 0, "{e}");
    let old = snapshot(&dir);
    // `sun` writes about 5 MB: more than the disk holds
    let (c, _, e) = icefold(&["sun", "--out", d, "--quiet"]);
    let now = snapshot(&dir);
    let rest = leftovers(&mnt, "s");
    let _ = Command::new("umount").arg(&mnt).status();
    let _ = fs::remove_dir_all(&mnt);
    assert_eq!(c, 1, "{e}");
    assert!(e.to_lowercase().contains("space"), "{e}");
    assert_eq!(e.trim().lines().count(), 1, "{e}");
    assert!(now == old, "the old set changed");
    assert_eq!(rest, Vec::<String>::new());
}
