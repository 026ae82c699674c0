//! Output files: what `--out` and `--plots` do to the paths they are given (regular files, symlinks,
//! FIFOs, devices), whole-or-nothing writing, the `--plots` manifest, and interrupted runs.
//! (Rules of the file system from POSIX rename(2) and mkfifo(3): common practice, no source needed
//! beyond the standard.)

mod common;

use std::os::unix::fs::FileTypeExt;
use std::path::{Path, PathBuf};
use std::process::Command;

use common::{bin, stdout_of, succeed};

fn demo(name: &str) -> String {
    format!("{}/examples/{name}", env!("CARGO_MANIFEST_DIR"))
}

fn policy_file(name: &str) -> String {
    format!("{}/policies/{name}", env!("CARGO_MANIFEST_DIR"))
}

fn mkfifo(path: &Path) {
    let st = Command::new("mkfifo").arg(path).status().unwrap();
    assert!(st.success(), "mkfifo failed");
}

/// Hidden temporary files furrow leaves in `dir` (there must never be any after a run).
fn temporaries(dir: &Path) -> Vec<PathBuf> {
    std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.to_string_lossy().contains(".furrow-tmp-"))
        .collect()
}

/// The CSV that `run` prints on stdout for the demo (the reference for every file test below).
fn run_csv_stdout() -> Vec<u8> {
    let out = stdout_of(["run", &demo("dunmere_cycle.toml"), "--format", "csv"]);
    assert!(!out.is_empty());
    out.into_bytes()
}

/// Runs the demo with `--format csv --out path`, asserting success.
fn run_csv_to(path: &Path) {
    succeed(
        bin()
            .args([
                "run",
                &demo("dunmere_cycle.toml"),
                "--format",
                "csv",
                "--out",
            ])
            .arg(path),
    );
}

#[test]
fn out_to_a_fifo_writes_into_the_fifo() {
    let dir = tempfile::tempdir().unwrap();
    let fifo = dir.path().join("pipe");
    mkfifo(&fifo);
    let reader = {
        let fifo = fifo.clone();
        std::thread::spawn(move || std::fs::read(&fifo).unwrap())
    };
    run_csv_to(&fifo);
    let got = reader.join().unwrap();
    assert_eq!(got, run_csv_stdout());
    // still a FIFO, and nothing else left in the folder
    let meta = std::fs::symlink_metadata(&fifo).unwrap();
    assert!(meta.file_type().is_fifo(), "the FIFO was replaced");
    assert!(temporaries(dir.path()).is_empty());
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
}

#[test]
fn out_through_a_symlink_replaces_the_target_and_keeps_the_link() {
    let dir = tempfile::tempdir().unwrap();
    let sub = dir.path().join("data");
    std::fs::create_dir(&sub).unwrap();
    let target = sub.join("result.csv");
    std::fs::write(&target, "old contents\n").unwrap();
    let link = dir.path().join("latest.csv");
    std::os::unix::fs::symlink("data/result.csv", &link).unwrap();
    run_csv_to(&link);
    let meta = std::fs::symlink_metadata(&link).unwrap();
    assert!(meta.file_type().is_symlink(), "the link was replaced");
    assert_eq!(
        std::fs::read_link(&link).unwrap(),
        PathBuf::from("data/result.csv")
    );
    assert!(std::fs::symlink_metadata(&target)
        .unwrap()
        .file_type()
        .is_file());
    assert_eq!(std::fs::read(&target).unwrap(), run_csv_stdout());
    assert!(temporaries(dir.path()).is_empty() && temporaries(&sub).is_empty());
}

#[test]
fn out_through_a_dangling_symlink_creates_its_target() {
    let dir = tempfile::tempdir().unwrap();
    let link = dir.path().join("l.csv");
    std::os::unix::fs::symlink("new.csv", &link).unwrap();
    run_csv_to(&link);
    assert!(std::fs::symlink_metadata(&link)
        .unwrap()
        .file_type()
        .is_symlink());
    assert_eq!(
        std::fs::read(dir.path().join("new.csv")).unwrap(),
        run_csv_stdout()
    );
}

#[test]
fn out_to_dev_null_leaves_it_a_character_device() {
    for verb in [
        vec!["run", &demo("dunmere_cycle.toml"), "--format", "json"],
        vec!["stability", &demo("dunmere_cycle.toml")],
    ] {
        succeed(bin().args(&verb).args(["--out", "/dev/null"]));
        let meta = std::fs::symlink_metadata("/dev/null").unwrap();
        assert!(
            meta.file_type().is_char_device(),
            "/dev/null is no longer a character device"
        );
    }
    // the library call directly, with a temporary name that must not appear in /dev
    furrow::output::write_whole(Path::new("/dev/null"), b"x").unwrap();
    assert!(std::fs::symlink_metadata("/dev/null")
        .unwrap()
        .file_type()
        .is_char_device());
    assert!(temporaries(Path::new("/dev")).is_empty());
}

#[test]
fn out_to_a_directory_is_refused_and_leaves_it_alone() {
    let dir = tempfile::tempdir().unwrap();
    let out = bin()
        .args(["run", &demo("dunmere_cycle.toml"), "--out"])
        .arg(dir.path())
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains(&dir.path().display().to_string()),
        "the message names the path: {err}"
    );
    assert!(std::fs::metadata(dir.path()).unwrap().is_dir());
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
}

#[test]
fn a_failed_write_leaves_the_old_file_and_no_temporary() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("o.txt");
    std::fs::write(&p, "old").unwrap();
    let r = furrow::output::write_streamed(&p, |w| {
        w.write_all(b"half of the new")?;
        Err(std::io::Error::other("the producer failed"))
    });
    assert!(r.is_err());
    assert_eq!(std::fs::read_to_string(&p).unwrap(), "old");
    assert!(temporaries(dir.path()).is_empty());
    // (the process-wide registry is shared with the tests running in parallel: not checked here)
}

#[test]
fn png_through_a_symlink_and_into_a_fifo() {
    let dir = tempfile::tempdir().unwrap();
    let plot = furrow::plots::paths(
        "Price",
        "period",
        "price",
        vec![furrow::plots::Series::periods("a", &[1.0, 2.0, 1.5])],
    );
    // symlink: the target gets a whole PNG, the link stays
    let target = dir.path().join("real.png");
    let link = dir.path().join("link.png");
    std::os::unix::fs::symlink("real.png", &link).unwrap();
    plot.write_png(&link).unwrap();
    assert!(std::fs::symlink_metadata(&link)
        .unwrap()
        .file_type()
        .is_symlink());
    let img = image::open(&target).unwrap();
    assert_eq!((img.width(), img.height()), plot.size());
    // FIFO: the bytes arrive through it, and it stays a FIFO
    let fifo = dir.path().join("fig.png");
    mkfifo(&fifo);
    let reader = {
        let fifo = fifo.clone();
        std::thread::spawn(move || std::fs::read(&fifo).unwrap())
    };
    plot.write_png(&fifo).unwrap();
    let bytes = reader.join().unwrap();
    let img = image::load_from_memory(&bytes).unwrap();
    assert_eq!((img.width(), img.height()), plot.size());
    assert!(std::fs::symlink_metadata(&fifo)
        .unwrap()
        .file_type()
        .is_fifo());
    assert!(temporaries(dir.path()).is_empty());
}

/// Every PNG in `dir` decodes completely (a truncated file fails to decode).
fn assert_pngs_decode(dir: &Path) -> usize {
    let mut n = 0;
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.extension().is_some_and(|x| x == "png") {
            let img = image::open(&p);
            assert!(
                img.is_ok(),
                "{} does not decode: {:?}",
                p.display(),
                img.err()
            );
            n += 1;
        }
    }
    n
}

#[test]
fn plots_manifest_notes_stale_files_and_clean_removes_them() {
    let dir = tempfile::tempdir().unwrap();
    let plots = dir.path().join("figs");
    let run = |policies: &[&str], clean: bool| {
        let mut cmd = bin();
        cmd.args(["compare", &demo("veldmark_weather.toml")]);
        for p in policies {
            cmd.arg(policy_file(p));
        }
        cmd.args(["--replications", "20", "--out", "/dev/null", "--plots"])
            .arg(&plots);
        if clean {
            cmd.arg("--clean");
        }
        succeed(&mut cmd).1
    };
    run(&["none.toml", "price_band.toml"], false);
    let band_cobweb = std::fs::read_dir(&plots)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        // the band spends, the market left alone does not: only the first run draws a fiscal chart
        .find(|n| n == "fiscal_cost.png")
        .expect("a fiscal chart of the band policy");
    // a file the user put there is never touched
    std::fs::write(plots.join("notes.txt"), "mine").unwrap();
    let err = run(&["none.toml"], false);
    assert!(
        err.contains("stale") && err.contains(&band_cobweb) && err.contains("--clean"),
        "{err}"
    );
    assert!(plots.join(&band_cobweb).exists(), "removed without --clean");
    let err = run(&["none.toml"], true);
    assert!(
        err.contains("removed") && err.contains(&band_cobweb),
        "{err}"
    );
    assert!(!plots.join(&band_cobweb).exists());
    assert!(plots.join("notes.txt").exists());
    assert!(plots.join("price_paths.png").exists());
    let err = run(&["none.toml"], false);
    assert!(!err.contains("stale"), "{err}");
    assert!(temporaries(&plots).is_empty());
    assert!(assert_pngs_decode(&plots) > 3);
}

#[test]
fn a_plots_run_killed_by_sigterm_leaves_no_temporary_and_no_truncated_png() {
    let dir = tempfile::tempdir().unwrap();
    let plots = dir.path().join("figs");
    let out_file = dir.path().join("path.csv");
    // long paths make the run slow to write (about a second and a half in all; the figures are
    // thinned, so most of the time goes into the CSV and the path)
    let args = |cmd: &mut Command| {
        cmd.args([
            "run",
            &demo("veldmark_weather.toml"),
            "--replications",
            "1",
            "--periods",
            "150000",
            "--format",
            "csv",
            "--out",
        ])
        .arg(&out_file)
        .arg("--plots")
        .arg(&plots);
    };
    // a complete run first, so that the killed runs replace existing files
    let mut first = Command::new(env!("CARGO_BIN_EXE_furrow"));
    args(&mut first);
    assert!(first.output().unwrap().status.success());
    let complete = std::fs::read(&out_file).unwrap();
    let mut killed = 0;
    for delay_ms in (20..=1400).step_by(110) {
        let mut cmd = Command::new(env!("CARGO_BIN_EXE_furrow"));
        args(&mut cmd);
        let mut child = cmd
            .stdout(std::process::Stdio::null())
            .stderr(std::process::Stdio::null())
            .spawn()
            .unwrap();
        std::thread::sleep(std::time::Duration::from_millis(delay_ms));
        let st = Command::new("kill")
            .args(["-TERM", &child.id().to_string()])
            .status()
            .unwrap();
        assert!(st.success());
        let status = child.wait().unwrap();
        if !status.success() {
            killed += 1;
        }
        assert!(
            temporaries(&plots).is_empty() && temporaries(dir.path()).is_empty(),
            "temporary files left after SIGTERM at {delay_ms} ms: {:?}",
            temporaries(&plots)
        );
        assert!(assert_pngs_decode(&plots) >= 3);
        // the data file is the whole old one or the whole new one (the same bytes here)
        assert_eq!(std::fs::read(&out_file).unwrap(), complete);
    }
    assert!(
        killed >= 3,
        "only {killed} runs were still running when killed"
    );
}
