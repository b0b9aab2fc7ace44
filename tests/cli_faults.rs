//! CLI tests of interruption and faults: a signal during a run, an output that cannot be
//! written (a file in the way, a folder under the target name, a read-only mount, a folder
//! without write permission), a full disk and a file-size limit, a full or closed standard
//! output. Each leaves nothing under the names asked for: no output, no manifest, no
//! `.partial` file.
//!
//! A full disk is a 256 KiB tmpfs where this machine lets the test mount one (in a private
//! mount namespace, `unshare -m` as root or `unshare -rm` otherwise; skipped with a printed
//! reason where it may not), and always RLIMIT_FSIZE with SIGXFSZ ignored: `write` past the
//! limit then fails with EFBIG (POSIX `setrlimit`; the limit and an ignored signal both
//! survive `execve`), which reaches the same error path as ENOSPC on any machine.
#![cfg(unix)]

mod common;

use std::io;
use std::os::unix::process::{CommandExt, ExitStatusExt};
use std::path::Path;
use std::process::{Child, Command, Output, Stdio};
use std::time::{Duration, Instant};

use common::{Scratch, WHITE, bin, outputs, run, run_ok, text};

fn is_root() -> bool {
    // SAFETY: geteuid has no preconditions and cannot fail.
    unsafe { libc::geteuid() == 0 }
}

/// Makes `cmd` run with a file-size limit of `bytes` and SIGXFSZ ignored, so a write past
/// the limit fails with EFBIG ("File too large") instead of killing the process.
fn limit_file_size(cmd: &mut Command, bytes: u64) -> &mut Command {
    let limit = bytes as libc::rlim_t;
    // SAFETY: the closure runs in the child between fork and exec and only calls signal and
    // setrlimit, which are async-signal-safe.
    unsafe {
        cmd.pre_exec(move || {
            if libc::signal(libc::SIGXFSZ, libc::SIG_IGN) == libc::SIG_ERR {
                return Err(io::Error::last_os_error());
            }
            let r = libc::rlimit {
                rlim_cur: limit,
                rlim_max: limit,
            };
            if libc::setrlimit(libc::RLIMIT_FSIZE, &r) != 0 {
                return Err(io::Error::last_os_error());
            }
            Ok(())
        })
    }
}

/// [`run`] under a file-size limit of `bytes` (see [`limit_file_size`]).
fn run_limited<S: AsRef<std::ffi::OsStr>>(bytes: u64, args: &[S], cwd: &Path) -> Output {
    limit_file_size(&mut bin(), bytes)
        .args(args)
        .current_dir(cwd)
        .output()
        .expect("the noisewright binary runs")
}

/// Starts the binary with `args` in `cwd`, its stdout discarded and its stderr captured.
fn start(args: &[&str], cwd: &Path) -> Child {
    bin()
        .args(args)
        .current_dir(cwd)
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the noisewright binary starts")
}

/// Waits until a file whose name starts with `prefix` appears in `dir` (the run has got past
/// its start-up), at most 10 s; past that the child is killed and the test fails.
fn wait_for_file(dir: &Path, prefix: &str, child: &mut Child) {
    let start = Instant::now();
    loop {
        let seen = std::fs::read_dir(dir)
            .unwrap()
            .any(|e| e.unwrap().file_name().to_string_lossy().starts_with(prefix));
        if seen {
            return;
        }
        if let Some(status) = child.try_wait().unwrap() {
            panic!("the run ended ({status}) before {prefix}* appeared");
        }
        if start.elapsed() > Duration::from_secs(10) {
            let _ = child.kill();
            let _ = child.wait();
            panic!("no {prefix}* in {} after 10 s", dir.display());
        }
        std::thread::sleep(Duration::from_millis(20));
    }
}

/// Sends `signal` to the child, then waits for it at most 20 s (killing it past that).
fn signal_and_wait(mut child: Child, signal: i32) -> Output {
    // SAFETY: kill has no memory preconditions; the pid is our own live child.
    assert_eq!(unsafe { libc::kill(child.id() as libc::pid_t, signal) }, 0);
    let start = Instant::now();
    while child.try_wait().unwrap().is_none() {
        if start.elapsed() > Duration::from_secs(20) {
            let _ = child.kill();
            panic!("still running 20 s after signal {signal}");
        }
        std::thread::sleep(Duration::from_millis(20));
    }
    child.wait_with_output().unwrap()
}

/// Asserts a run failed as a job (exit 1) with a message holding every one of `words`.
fn assert_failed_with(o: &Output, words: &[&str], row: &str) {
    let err = text(&o.stderr);
    assert_eq!(o.status.code(), Some(1), "{row}: {err}");
    for w in words {
        assert!(err.contains(w), "{row}: message lacks {w:?}: {err}");
    }
}

// ---------------------------------------------------------------------------------------------
// Signals

/// SIGINT, SIGTERM and SIGHUP during a long `generate`: the run removes its partial files and
/// ends by that signal (so a shell reports 128 + its number), leaving no file under the target
/// name, no manifest and no `.partial` file.
#[test]
fn a_signal_during_generate_leaves_no_file_under_the_target_name() {
    for (signal, name) in [
        (libc::SIGINT, "SIGINT"),
        (libc::SIGTERM, "SIGTERM"),
        (libc::SIGHUP, "SIGHUP"),
    ] {
        let s = Scratch::new("signal");
        let p = s.file("w.toml", WHITE);
        let args = ["generate", p.to_str().unwrap(), "-o", "long.raw"];
        let mut child = start(&[&args[..], &["--duration", "2h"]].concat(), &s);
        wait_for_file(&s.dir, ".long.raw.partial-", &mut child);
        // Some samples are written before the signal.
        std::thread::sleep(Duration::from_millis(200));
        let o = signal_and_wait(child, signal);
        let err = text(&o.stderr);
        assert_eq!(
            o.status.signal(),
            Some(signal),
            "{name}: {:?} {err}",
            o.status
        );
        assert!(err.contains("interrupted"), "{name}: {err}");
        assert!(
            outputs(&s.dir, &[]).is_empty(),
            "{name}: left behind {:?}",
            outputs(&s.dir, &[])
        );
    }
}

/// What a shell reports for a run stopped by SIGTERM: 143 (128 + 15), as for any program
/// killed by it, and nothing is left in the folder.
#[test]
fn a_shell_reports_143_for_sigterm() {
    let s = Scratch::new("shell");
    let p = s.file("w.toml", WHITE);
    let script = r#"
        "$0" generate "$1" -o long.raw --duration 2h 2>/dev/null &
        pid=$!
        n=0
        until ls -A | grep -q '^\.long\.raw\.partial-'; do
            n=$((n + 1)); [ "$n" -gt 500 ] && { kill -9 "$pid"; echo "no partial file"; exit 0; }
            sleep 0.02
        done
        sleep 0.2
        kill -TERM "$pid"
        wait "$pid"
        echo "status $?"
        ls -A | grep -v '\.toml$'
    "#;
    let o = Command::new("sh")
        .args(["-c", script, env!("CARGO_BIN_EXE_noisewright")])
        .arg(&p)
        .current_dir(&s.dir)
        .output()
        .unwrap();
    assert_eq!(text(&o.stdout), "status 143\n", "{}", text(&o.stderr));
}

/// SIGINT while `analyze` reads a long capture leaves none of its outputs (`--fit`,
/// `--plot`, `--report`), which exist only as partial files during the passes. The capture
/// is a sparse file of zeros (1 GiB of f32: 268 M samples, many seconds of analysis).
#[test]
fn sigint_during_analyze_leaves_none_of_its_outputs() {
    let s = Scratch::new("analyze-int");
    let capture = s.path("long.f32");
    std::fs::File::create(&capture)
        .unwrap()
        .set_len(1 << 30)
        .unwrap();
    let mut child = start(
        &[
            "analyze", "long.f32", "--rate", "48kHz", "--fit", "f.toml", "--plot", "p.svg",
            "--report", "r.html",
        ],
        &s,
    );
    wait_for_file(&s.dir, ".r.html.partial-", &mut child);
    std::thread::sleep(Duration::from_millis(100));
    let o = signal_and_wait(child, libc::SIGINT);
    assert_eq!(
        o.status.signal(),
        Some(libc::SIGINT),
        "{:?} {}",
        o.status,
        text(&o.stderr)
    );
    // left_in passes over .toml files, so the fit is looked for by name.
    assert!(!s.path("f.toml").exists(), "the fit was left behind");
    assert_eq!(outputs(&s.dir, &["long.f32"]), Vec::<String>::new());
}

// ---------------------------------------------------------------------------------------------
// Outputs that cannot be written

/// Folders that cannot take the output fail as a job (exit 1) before the run, with a message
/// naming the path and the OS's reason, and leave the folder as it was. Every row but the
/// permission one fails for root too.
#[test]
fn unwritable_outputs_fail_with_the_path_and_the_reason() {
    let s = Scratch::new("unwritable");
    let p = s.file("w.toml", WHITE);
    std::fs::write(s.path("notes.txt"), "a file, not a folder\n").unwrap();
    std::fs::create_dir(s.path("taken.wav")).unwrap();
    std::fs::create_dir(s.path("m.raw.json")).unwrap();
    let keep = ["notes.txt", "taken.wav", "m.raw.json"];
    let rows: &[(&str, &str, &[&str])] = &[
        (
            "the parent is a file",
            "notes.txt/x.wav",
            &["notes.txt/x.wav", "Not a directory"],
        ),
        (
            "a folder on the way is a file",
            "notes.txt/sub/x.wav",
            &["notes.txt/sub", "Not a directory"],
        ),
        (
            "the output is a folder",
            "taken.wav",
            &["taken.wav", "folder"],
        ),
        (
            "the manifest's name is a folder",
            "m.raw",
            &["m.raw.json", "folder"],
        ),
    ];
    for (row, out, words) in rows {
        let o = run(
            &[
                "generate",
                p.to_str().unwrap(),
                "-o",
                out,
                "--duration",
                "1s",
            ],
            &s.dir,
        );
        assert_failed_with(&o, words, row);
        assert_eq!(outputs(&s.dir, &keep), Vec::<String>::new(), "{row}");
        assert!(s.path("taken.wav").read_dir().unwrap().next().is_none());
        assert!(s.path("m.raw.json").read_dir().unwrap().next().is_none());
    }

    // Permission bits stop everyone but root, whom they do not stop.
    if is_root() {
        println!("skipped the read-only-permission row: running as root, which writes anyway");
        return;
    }
    let locked = s.path("locked");
    std::fs::create_dir(&locked).unwrap();
    use std::os::unix::fs::PermissionsExt;
    std::fs::set_permissions(&locked, std::fs::Permissions::from_mode(0o555)).unwrap();
    let o = run(
        &["generate", p.to_str().unwrap(), "-o", "locked/x.wav"],
        &s.dir,
    );
    std::fs::set_permissions(&locked, std::fs::Permissions::from_mode(0o755)).unwrap();
    assert_failed_with(&o, &["locked/x.wav", "Permission denied"], "mode 0555");
    assert!(locked.read_dir().unwrap().next().is_none());
}

/// `budget --plot` into a file that is in the way: exit 1, the path and the reason.
#[test]
fn budget_plot_into_a_file_in_the_way_fails_cleanly() {
    let s = Scratch::new("budget-way");
    let p = s.file("w.toml", WHITE);
    std::fs::write(s.path("notes.txt"), "x").unwrap();
    let o = run(
        &["budget", p.to_str().unwrap(), "--plot", "notes.txt/b.svg"],
        &s.dir,
    );
    assert_failed_with(&o, &["notes.txt/b.svg", "Not a directory"], "budget");
    assert_eq!(outputs(&s.dir, &["notes.txt"]), Vec::<String>::new());
}

/// Runs `args` (the noisewright binary's) in a private mount namespace with a tmpfs of
/// `options` mounted on `mnt`; returns its output and what `mnt` held afterwards, or None
/// (printing why) when this machine does not let the test mount one.
fn in_tmpfs(mnt: &Path, options: &str, args: &[&str]) -> Option<(Output, String)> {
    let scratch = mnt.parent().unwrap();
    let (mounted, after) = (scratch.join("mounted"), scratch.join("after"));
    let script = r#"
        mnt=$1; opts=$2; mounted=$3; after=$4; shift 4
        mount -t tmpfs -o "$opts" noisewright-test "$mnt" || exit 97
        : > "$mounted"
        "$@"
        rc=$?
        ls -A "$mnt" > "$after"
        exit $rc
    "#;
    // As root a mount namespace is enough; otherwise a user namespace maps us to root in it.
    let flags: &[&str] = if is_root() { &["-m"] } else { &["-r", "-m"] };
    let out = Command::new("unshare")
        .args(flags)
        .args(["sh", "-c", script, "sh"])
        .args([mnt, Path::new(options), &mounted, &after])
        .arg(env!("CARGO_BIN_EXE_noisewright"))
        .args(args)
        .output();
    match out {
        Ok(o) if mounted.exists() => {
            let listing = std::fs::read_to_string(&after).unwrap_or_default();
            Some((o, listing))
        }
        Ok(o) => {
            println!(
                "skipped the tmpfs row: cannot mount a tmpfs here ({})",
                text(&o.stderr).trim()
            );
            None
        }
        Err(e) => {
            println!("skipped the tmpfs row: cannot run unshare ({e})");
            None
        }
    }
}

/// `generate -o MNT/NAME EXTRA…` onto a tmpfs of `options` mounted on MNT: exit 1 with
/// NAME and `reason` in the message, and nothing left on the mount.
fn fails_cleanly_on_a_tmpfs(options: &str, name: &str, extra: &[&str], reason: &str) {
    let s = Scratch::new("tmpfs");
    let p = s.file("w.toml", WHITE);
    let mnt = s.path("mnt");
    std::fs::create_dir(&mnt).unwrap();
    let target = mnt.join(name);
    let mut args = vec![
        "generate",
        p.to_str().unwrap(),
        "-o",
        target.to_str().unwrap(),
    ];
    args.extend_from_slice(extra);
    let Some((o, listing)) = in_tmpfs(&mnt, options, &args) else {
        return;
    };
    assert_failed_with(&o, &[name, reason], options);
    assert_eq!(listing, "", "left on the mount");
}

/// A read-only mount refuses root too: exit 1, the path, "Read-only file system", nothing
/// written.
#[test]
fn a_read_only_mount_fails_cleanly() {
    fails_cleanly_on_a_tmpfs("ro,size=64k", "x.wav", &[], "Read-only file system");
}

/// A full disk: 10 s of f32 WAV (1.9 MB) into a 256 KiB tmpfs. Exit 1, the output's name
/// and "No space left on device", and nothing left on the mount.
#[test]
fn a_full_tmpfs_leaves_no_output() {
    fails_cleanly_on_a_tmpfs(
        "size=256k",
        "full.wav",
        &["--duration", "10s"],
        "No space left on device",
    );
}

/// The full-disk equivalent that runs anywhere: a 64 KiB file-size limit under 1 s of every
/// format (≥ 192 kB each). Exit 1, the output's name and "File too large"; no output, no
/// manifest, no partial file.
#[test]
fn a_file_size_limit_stops_every_format_cleanly() {
    let s = Scratch::new("fsize");
    let p = s.file("w.toml", WHITE);
    for out in ["x.wav", "x.csv", "x.raw", "x.npy", "x.h"] {
        let o = run_limited(
            64 << 10,
            &[
                "generate",
                p.to_str().unwrap(),
                "-o",
                out,
                "--duration",
                "1s",
            ],
            &s,
        );
        assert_failed_with(&o, &[out, "File too large"], out);
        assert_eq!(outputs(&s.dir, &[]), Vec::<String>::new(), "{out}");
    }
}

/// Sizes in bytes of the files `names` in `dir`.
fn sizes(dir: &Path, names: &[&str]) -> Vec<u64> {
    names
        .iter()
        .map(|n| std::fs::metadata(dir.join(n)).unwrap().len())
        .collect()
}

/// A limit between the noise file's size and its manifest's: the noise is written, the
/// manifest is not, and the noise file must not land without it.
#[test]
fn a_manifest_that_cannot_be_written_takes_its_noise_file_with_it() {
    let s = Scratch::new("manifest");
    let p = s.file("w.toml", WHITE);
    let args = [
        "generate",
        p.to_str().unwrap(),
        "-o",
        "x.raw",
        "--samples",
        "100",
    ];
    run_ok(&args, &s.dir);
    let v = sizes(&s.dir, &["x.raw", "x.raw.json"]);
    let (data, manifest) = (v[0], v[1]);
    assert!(
        data < manifest,
        "the test needs a manifest ({manifest} B) larger than its data ({data} B)"
    );
    std::fs::remove_file(s.path("x.raw")).unwrap();
    std::fs::remove_file(s.path("x.raw.json")).unwrap();

    let o = run_limited((data + manifest) / 2, &args, &s);
    assert_failed_with(&o, &["x.raw.json", "File too large"], "manifest");
    assert_eq!(outputs(&s.dir, &[]), Vec::<String>::new());
}

/// `analyze --fit --plot --report`: a limit that holds the smallest of the three but not the
/// largest fails the job and leaves none of them (they land together or not at all).
#[test]
fn analyze_outputs_land_together_or_not_at_all() {
    let s = Scratch::new("analyze-fsize");
    let p = s.file("w.toml", WHITE);
    run_ok(
        &[
            "generate",
            p.to_str().unwrap(),
            "-o",
            "c.wav",
            "--duration",
            "2s",
        ],
        &s.dir,
    );
    let made = ["f.toml", "p.svg", "r.html"];
    let args = [
        "analyze", "c.wav", "--fit", "f.toml", "--plot", "p.svg", "--report", "r.html",
    ];
    run_ok(&args, &s.dir);
    let v = sizes(&s.dir, &made);
    let (small, large) = (*v.iter().min().unwrap(), *v.iter().max().unwrap());
    assert!(small < large, "sizes {v:?}");
    let largest = made[v.iter().position(|&x| x == large).unwrap()];
    for n in made {
        std::fs::remove_file(s.path(n)).unwrap();
    }

    let o = run_limited((small + large) / 2, &args, &s);
    assert_failed_with(&o, &[largest, "File too large"], "analyze");
    for n in made {
        assert!(!s.path(n).exists(), "{n} was left behind");
    }
    assert_eq!(
        outputs(&s.dir, &["c.wav", "c.wav.json"]),
        Vec::<String>::new()
    );
}

/// `budget --plot` under a 1 KiB limit: exit 1, the chart's name and "File too large",
/// nothing left.
#[test]
fn budget_plot_under_a_file_size_limit_fails_cleanly() {
    let s = Scratch::new("budget-fsize");
    let p = s.file("w.toml", WHITE);
    let o = run_limited(
        1 << 10,
        &["budget", p.to_str().unwrap(), "--plot", "b.svg"],
        &s,
    );
    assert_failed_with(&o, &["b.svg", "File too large"], "budget");
    assert_eq!(outputs(&s.dir, &[]), Vec::<String>::new());
}

// ---------------------------------------------------------------------------------------------
// Standard output

/// Standard output on /dev/full (every write: ENOSPC): samples streamed with `-o -`, and the
/// summaries of `budget` and `generate` fail as a job (exit 1) with "standard output" and
/// the reason, not a panic. With `-o FILE` the complete file and manifest were committed
/// before the summary, so they stay.
#[test]
fn standard_output_on_dev_full_is_a_clear_error() {
    let full = Path::new("/dev/full");
    if !full.exists() {
        println!("skipped: this system has no /dev/full");
        return;
    }
    let s = Scratch::new("devfull");
    let p = s.file("w.toml", WHITE);
    let p = p.to_str().unwrap();
    let rows: &[(&str, &[&str])] = &[
        ("stream", &["generate", p, "-o", "-", "--samples", "100000"]),
        ("budget", &["budget", p]),
        (
            "summary",
            &["generate", p, "-o", "x.raw", "--samples", "100"],
        ),
    ];
    for (row, args) in rows {
        let o = bin()
            .args(*args)
            .current_dir(&s.dir)
            .stdout(std::fs::OpenOptions::new().write(true).open(full).unwrap())
            .output()
            .unwrap();
        assert_failed_with(&o, &["standard output", "No space left on device"], row);
        assert!(!text(&o.stderr).contains("panicked"), "{row}");
    }
    assert_eq!(outputs(&s.dir, &[]), ["x.raw", "x.raw.json"]);
}

/// Streaming samples to a reader that closes the pipe ends quietly with exit 0.
#[test]
fn streaming_to_a_closed_pipe_ends_quietly() {
    let s = Scratch::new("pipe");
    let p = s.file("w.toml", WHITE);
    let mut child = bin()
        .args([
            "generate",
            p.to_str().unwrap(),
            "-o",
            "-",
            "--duration",
            "inf",
        ])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    {
        use std::io::Read;
        let mut stdout = child.stdout.take().unwrap();
        let mut buf = vec![0u8; 1 << 20];
        stdout.read_exact(&mut buf).unwrap();
        // Dropping stdout closes the pipe.
    }
    let o = child.wait_with_output().unwrap();
    assert_eq!(o.status.code(), Some(0), "{}", text(&o.stderr));
    assert!(o.stderr.is_empty(), "{}", text(&o.stderr));
}

/// A standard output whose reader is already gone (the pipe's read end closed before the
/// run): a summary written there ends quietly with exit 0, and `generate -o FILE` still
/// leaves its complete file and manifest.
#[test]
fn a_summary_to_a_closed_pipe_ends_quietly() {
    let s = Scratch::new("closed");
    let p = s.file("w.toml", WHITE);
    let p = p.to_str().unwrap();
    let rows: &[(&str, &[&str])] = &[
        ("budget", &["budget", p]),
        (
            "generate",
            &["generate", p, "-o", "x.raw", "--samples", "100"],
        ),
        ("analyze", &["analyze", "x.raw"]),
    ];
    for (row, args) in rows {
        let o = bin()
            .args(*args)
            .current_dir(&s.dir)
            .stdout(closed_pipe())
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(0), "{row}: {}", text(&o.stderr));
        assert!(o.stderr.is_empty(), "{row}: {}", text(&o.stderr));
    }
    assert_eq!(outputs(&s.dir, &[]), ["x.raw", "x.raw.json"]);
}

/// The write end of a pipe whose read end is already closed: every write gets EPIPE.
fn closed_pipe() -> Stdio {
    use std::os::fd::{FromRawFd, OwnedFd};
    let mut fds = [0; 2];
    // SAFETY: pipe writes two new descriptors into the array; each is owned exactly once.
    let (read, write) = unsafe {
        assert_eq!(libc::pipe(fds.as_mut_ptr()), 0);
        (OwnedFd::from_raw_fd(fds[0]), OwnedFd::from_raw_fd(fds[1]))
    };
    drop(read);
    Stdio::from(write)
}

/// A profile of `n` white floors with corners (each density evaluation sums them all) and a
/// band reaching `low` (each pyramid level evaluates the density 16 385 times).
fn many_sources(n: usize, low: &str) -> String {
    let mut t = format!("sample_rate = \"100 kHz\"\n[band]\nlow = \"{low}\"\nhigh = \"40 kHz\"\n");
    for i in 0..n {
        t += &format!(
            "[[floor]]\ndensity = \"{} nV/rtHz\"\ncorner = \"{} Hz\"\n",
            1 + i % 7,
            1 + i % 97
        );
    }
    t
}

/// A `[[table]]` of `n` points of 1 nV/√Hz, log-spaced from 1 mHz to 10 kHz.
fn table_of(n: usize) -> String {
    let points: Vec<String> = (0..n)
        .map(|i| {
            format!(
                "[{:e}, 1e-9]",
                1e-3 * 1e7f64.powf(i as f64 / (n - 1) as f64)
            )
        })
        .collect();
    format!("[[table]]\npoints = [{}]\n", points.join(", "))
}

/// SIGINT 0.25 s into a long computation before any sample is written (the design of many
/// sources down to a low band edge, a loop buffer of many sources, a burst's catch-up to a
/// far `--start-sample` at 1000 jumps per sample, a budget, an analysis designing its profile): each
/// run notices it within 1.5 s, ends by SIGINT and leaves nothing in its folder.
#[test]
fn long_computations_stop_within_a_second_and_a_half_of_sigint() {
    let burst = "sample_rate = \"100 kHz\"\n[band]\nlow = \"1 Hz\"\nhigh = \"40 kHz\"\n\
                 [[burst]]\nlevels = [\"0 uV\", \"1 uV\"]\ndwell = [\"10 ns\", \"10 ns\"]\n";
    let rows: [(&str, String, Vec<&str>); 5] = [
        (
            "design",
            many_sources(255, "10 uHz") + &table_of(100_000),
            vec!["generate", "p.toml", "--samples", "1000", "-o", "x.raw"],
        ),
        (
            "loop buffer",
            many_sources(256, "1 Hz"),
            vec![
                "generate",
                "p.toml",
                "--loop",
                "--samples",
                "16777216",
                "-o",
                "x.raw",
            ],
        ),
        (
            "burst catch-up",
            burst.to_string(),
            vec![
                "generate",
                "p.toml",
                "--start-sample",
                "1099511627776",
                "--samples",
                "10",
            ]
            .into_iter()
            .chain(["-o", "x.raw"])
            .collect(),
        ),
        (
            "budget",
            // 255 floors and a table at the limit of 100 000 points down to 10 µHz (here and in
            // the design rows): about a second of work on an idle machine, four times the wait.
            many_sources(255, "10 uHz") + &table_of(100_000),
            vec!["budget", "p.toml", "--plot", "x.svg"],
        ),
        (
            "analysis design",
            many_sources(255, "10 uHz") + &table_of(100_000),
            vec![
                "analyze",
                "c.f32",
                "--rate",
                "100kHz",
                "--profile",
                "p.toml",
            ],
        ),
    ];
    for (row, profile, args) in rows {
        let s = Scratch::new("stop");
        s.file("p.toml", &profile);
        std::fs::write(s.path("c.f32"), vec![0u8; 4 * 4096]).unwrap();
        let mut child = start(&args, &s);
        std::thread::sleep(Duration::from_millis(250));
        if let Some(status) = child.try_wait().unwrap() {
            panic!("{row}: the run ended ({status}) before the signal");
        }
        let sent = Instant::now();
        let o = signal_and_wait(child, libc::SIGINT);
        let took = sent.elapsed();
        let err = text(&o.stderr);
        assert!(
            took < Duration::from_millis(1500),
            "{row}: took {took:?} after SIGINT"
        );
        assert_eq!(
            o.status.signal(),
            Some(libc::SIGINT),
            "{row}: {:?} {err}",
            o.status
        );
        assert!(err.contains("interrupted"), "{row}: {err}");
        assert_eq!(
            outputs(&s.dir, &["p.toml", "c.f32"]),
            Vec::<String>::new(),
            "{row}"
        );
    }
}

/// A standard output closed when the command starts (`>&-`, here `close(1)` in the child
/// before `exec`) fails before any work, exit 1, naming standard output; no file is written.
/// `> /dev/null` is the way to discard the output, and stays a success.
#[test]
fn a_standard_output_closed_from_the_start_is_not_success() {
    let s = Scratch::new("stdout-closed");
    let p = s.file("w.toml", WHITE);
    let p = p.to_str().unwrap();
    let rows: &[(&str, &[&str])] = &[
        (
            "stream",
            &["generate", p, "-o", "-", "--samples", "1000000"],
        ),
        ("budget", &["budget", p]),
        (
            "summary",
            &["generate", p, "-o", "x.raw", "--samples", "100"],
        ),
    ];
    for (row, args) in rows {
        let mut cmd = bin();
        cmd.args(*args).current_dir(&s.dir).stdout(Stdio::null());
        // SAFETY: only close(2), async-signal-safe, runs between fork and exec.
        unsafe {
            cmd.pre_exec(|| {
                libc::close(1);
                Ok(())
            });
        }
        let o = cmd.output().unwrap();
        assert_failed_with(
            &o,
            &["standard output", "closed when the command started"],
            row,
        );
        let o = bin()
            .args(*args)
            .current_dir(&s.dir)
            .stdout(Stdio::null())
            .output()
            .unwrap();
        assert_eq!(
            o.status.code(),
            Some(0),
            "{row} to /dev/null: {}",
            text(&o.stderr)
        );
        let _ = std::fs::remove_file(s.path("x.raw"));
        let _ = std::fs::remove_file(s.path("x.raw.json"));
    }
    assert!(outputs(&s.dir, &[]).is_empty());
}

/// An output that is a hard link to, or a symbolic link to, an input of the run, or an input
/// that is a link to the output, is the same file: refused with exit 2, and the input keeps
/// its bytes.
#[test]
fn an_output_linked_to_an_input_is_refused() {
    use std::os::unix::fs::symlink;
    let s = Scratch::new("links");
    s.file("w.toml", WHITE);
    std::fs::hard_link(s.path("w.toml"), s.path("hard.toml")).unwrap();
    symlink("w.toml", s.path("soft.toml")).unwrap();
    run_ok(
        &["generate", "w.toml", "-o", "cap.raw", "--samples", "4096"],
        &s.dir,
    );
    symlink("cap.raw", s.path("cap-link.raw")).unwrap();
    let capture = std::fs::read(s.path("cap.raw")).unwrap();
    let rows: &[(&str, &[&str], &[&str])] = &[
        (
            "hard link",
            &["generate", "w.toml", "-o", "hard.toml", "--format", "raw"],
            &["--output", "hard.toml", "same file as the profile w.toml"],
        ),
        (
            "symbolic link",
            &["generate", "w.toml", "-o", "soft.toml", "--format", "raw"],
            &["--output", "soft.toml", "same file as the profile w.toml"],
        ),
        (
            "profile through a link",
            &["generate", "soft.toml", "-o", "w.toml", "--format", "raw"],
            &["--output", "same file as the profile soft.toml"],
        ),
        (
            "budget plot",
            &["budget", "hard.toml", "--plot", "soft.toml"],
            &["--plot", "soft.toml", "same file as the profile hard.toml"],
        ),
        (
            "fit onto a link to the capture",
            &["analyze", "cap.raw", "--fit", "cap-link.raw"],
            &["--fit", "cap-link.raw", "same file as the capture cap.raw"],
        ),
        (
            "fit onto the profile by another name",
            &[
                "analyze",
                "cap-link.raw",
                "--profile",
                "soft.toml",
                "--fit",
                "hard.toml",
            ],
            &["--fit", "same file as the profile soft.toml"],
        ),
    ];
    for (row, args, words) in rows {
        let o = run(args, &s.dir);
        let err = text(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{row}: {err}");
        for w in *words {
            assert!(err.contains(w), "{row}: message lacks {w:?}: {err}");
        }
        assert_eq!(
            std::fs::read_to_string(s.path("w.toml")).unwrap(),
            WHITE,
            "{row}"
        );
        assert_eq!(std::fs::read(s.path("cap.raw")).unwrap(), capture, "{row}");
        assert_eq!(
            outputs(&s.dir, &[]),
            ["cap-link.raw", "cap.raw", "cap.raw.json"],
            "{row}"
        );
    }
}

/// Six `generate` runs with seeds 1 to 6 into one path at once, six times over: after each
/// round the samples in `o.raw` are exactly those of the seed its manifest names (each seed
/// written alone to its own file for reference), and no temporary file is left. Before the
/// commit took a lock, about one round in eight left one run's samples beside another's
/// manifest.
#[test]
fn concurrent_runs_into_one_path_leave_one_runs_samples_beside_its_manifest() {
    const RUNS: u64 = 6;
    let s = Scratch::new("race");
    s.file("w.toml", WHITE);
    let args = |seed: u64, out: &str| {
        [
            "generate",
            "w.toml",
            "-o",
            out,
            "--samples",
            "2048",
            "-q",
            "--seed",
        ]
        .iter()
        .map(|a| a.to_string())
        .chain([seed.to_string()])
        .collect::<Vec<_>>()
    };
    let reference: Vec<Vec<u8>> = (1..=RUNS)
        .map(|seed| {
            let name = format!("ref{seed}.raw");
            run_ok(&args(seed, &name), &s.dir);
            std::fs::read(s.path(&name)).unwrap()
        })
        .collect();
    for (i, r) in reference.iter().enumerate() {
        assert!(!reference[..i].contains(r), "seeds give distinct bytes");
    }
    for round in 0..6 {
        let children: Vec<Child> = (1..=RUNS)
            .map(|seed| {
                bin()
                    .args(args(seed, "o.raw"))
                    .current_dir(&s.dir)
                    .stderr(Stdio::piped())
                    .spawn()
                    .unwrap()
            })
            .collect();
        for c in children {
            let o = c.wait_with_output().unwrap();
            assert!(o.status.success(), "round {round}: {}", text(&o.stderr));
        }
        let seed = common::manifest(&s.path("o.raw"))["seed"].as_u64().unwrap();
        assert!(
            std::fs::read(s.path("o.raw")).unwrap() == reference[seed as usize - 1],
            "round {round}: o.raw does not hold the samples of seed {seed}, which its \
             manifest names"
        );
    }
    let mut want: Vec<String> = (1..=RUNS)
        .flat_map(|n| [format!("ref{n}.raw"), format!("ref{n}.raw.json")])
        .chain(["o.raw".into(), "o.raw.json".into()])
        .collect();
    want.sort();
    assert_eq!(outputs(&s.dir, &[]), want);
}
