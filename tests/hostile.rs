//! Hostile input (issue 9, item 3): truncated, corrupted and oversized Touchstone
//! data, absurd headers, odd frequencies, pathological rules text, and the
//! `inspect` binary on files it cannot use. Every case must end in a result or a
//! clear error, quickly, and never in a panic (exit 101) or a stack overflow.

use std::io::{self, BufReader, Read};
use std::path::PathBuf;
use std::process::Command;
use std::time::{Duration, Instant};

use lcgate::figures::{data_checks, view_figures};
use lcgate::network::{self, Network, PortMap, C64};
use lcgate::touchstone::{self, lex, read_bytes, read_reader, ReadError};

/// A small v1 2-port file (the Touchstone 1.1 specification's example 4 values).
const V1_S2P: &[u8] = b"! two-port, RI\n# GHZ S RI R 50.0\n\
1.0000 0.3926 -0.1211 -0.0003 -0.0021 -0.0003 -0.0021 0.3926 -0.1211\n\
2.0000 0.3517 -0.3054 -0.0096 -0.0298 -0.0096 -0.0298 0.3517 -0.3054\n\
10.000 0.3419 0.3336 -0.0134 0.0379 -0.0134 0.0379 0.3419 0.3336\n";

/// A small v2 file with keywords, a per-port reference and a lower-triangle matrix.
const V2_TS: &[u8] = b"[Version] 2.0\n# GHz S RI R 50\n[Number of Ports] 2\n\
[Two-Port Data Order] 12_21\n[Reference] 50 75\n[Number of Frequencies] 2\n\
[Matrix Format] Lower\n[Network Data]\n\
1 0.1 0.0 0.5 0.1 0.2 0.0\n\
2 0.2 -0.1 0.4 0.2 0.3 -0.1\n[End]\n";

fn quick<T>(what: &str, limit: Duration, f: impl FnOnce() -> T) -> T {
    let t = Instant::now();
    let out = f();
    assert!(t.elapsed() < limit, "{what} took {:?}", t.elapsed());
    out
}

/// An error must say where: the caller's name, a 1-based line and column, and the
/// Display must start with `name:line:column:`.
fn assert_located(e: &ReadError, name: &str) {
    assert_eq!(e.path, name);
    assert!(e.line >= 1 && e.column >= 1, "{e}");
    let prefix = format!("{name}:{}:{}: ", e.line, e.column);
    assert!(e.to_string().starts_with(&prefix), "{e}");
}

/// Every value in a read network is finite and every reference impedance positive.
fn assert_finite(net: &Network) {
    assert!(net.freq.iter().all(|f| f.is_finite()));
    assert!(net.z0.iter().all(|z| z.is_finite() && *z > 0.0));
    assert!(net.s.iter().all(|c| c.re.is_finite() && c.im.is_finite()));
    assert_eq!(net.s.len(), net.points() * net.ports * net.ports);
}

fn check_any(name: &str, bytes: &[u8]) {
    match read_bytes(name, bytes) {
        Ok(ts) => assert_finite(&ts.network),
        Err(e) => assert_located(&e, name),
    }
}

#[test]
fn every_prefix_of_a_small_file_reads_or_errors_with_a_location() {
    for (name, file) in [("cut.s2p", V1_S2P), ("cut.ts", V2_TS)] {
        // the whole file is good (otherwise the loop proves little)
        assert!(read_bytes(name, file).is_ok(), "{name}");
        for n in 0..file.len() {
            check_any(name, &file[..n]);
        }
    }
    // the v2 file without its [End] line is incomplete and must be refused
    let cut = V2_TS.len() - b"[End]\n".len();
    let cut_at_data = V2_TS
        .windows(2)
        .rposition(|w| w == b"2 ")
        .expect("second data row");
    assert!(read_bytes("cut.ts", &V2_TS[..cut_at_data]).is_err());
    check_any("cut.ts", &V2_TS[..cut]);
}

#[test]
fn every_byte_flipped_reads_or_errors_with_a_location() {
    let values = [
        0x00u8, 0x0D, b'\n', b'!', b'#', b'[', b'9', b'e', b'-', b'.', 0x7F, 0xFF,
    ];
    for (name, file) in [("flip.s2p", V1_S2P), ("flip.ts", V2_TS)] {
        let mut buf = file.to_vec();
        for i in 0..file.len() {
            for &v in &values {
                buf[i] = v;
                check_any(name, &buf);
            }
            buf[i] = file[i];
        }
    }
}

#[test]
fn cr_only_line_ends_read_the_same_as_lf() {
    for (name, file) in [("lf.s2p", V1_S2P), ("lf.ts", V2_TS)] {
        let lf = read_bytes(name, file).unwrap_or_else(|e| panic!("{e}"));
        let cr: Vec<u8> = file
            .iter()
            .map(|&b| if b == b'\n' { b'\r' } else { b })
            .collect();
        let crlf: Vec<u8> = file
            .iter()
            .flat_map(|&b| {
                if b == b'\n' {
                    vec![b'\r', b'\n']
                } else {
                    vec![b]
                }
            })
            .collect();
        for other in [cr, crlf] {
            let got = read_bytes(name, &other).unwrap_or_else(|e| panic!("{e}"));
            assert_eq!(got.network, lf.network, "{name}");
            assert_eq!(got.version, lf.version);
        }
    }
    // an error after CR-only ends still counts lines correctly
    let e = read_bytes("cr.s1p", b"# GHz S RI R 50\r1 0.5 0\r2 0.5 x\r").unwrap_err();
    assert_eq!((e.line, e.column), (3, 7), "{e}");
}

#[test]
fn an_overflowing_number_is_refused_with_line_and_column() {
    let e = read_bytes("big.s1p", b"# GHz S RI R 50\n1 0.5 0\n2 1e999 0\n").unwrap_err();
    assert_located(&e, "big.s1p");
    assert_eq!((e.line, e.column), (3, 3), "{e}");
    // in a frequency and in a reference impedance, too
    let e = read_bytes("big.s1p", b"# GHz S RI R 50\n1e999 0.5 0\n").unwrap_err();
    assert_eq!((e.line, e.column), (2, 1), "{e}");
    let e = read_bytes("big.s1p", b"# GHz S RI R 1e999\n1 0.5 0\n").unwrap_err();
    assert_eq!(e.line, 1, "{e}");
    // dB magnitude that overflows after conversion is no better than 1e999
    let e = read_bytes("big.s1p", b"# GHz S DB R 50\n1 9999 0\n").unwrap_err();
    assert_located(&e, "big.s1p");
}

#[test]
fn absurd_port_counts_are_refused_quickly() {
    for count in ["0", "99999999999", "18446744073709551616", "-1", "1001"] {
        let text = format!(
            "[Version] 2.0\n# GHz S RI R 50\n[Number of Ports] {count}\n\
             [Number of Frequencies] 1\n[Network Data]\n1 0 0\n[End]\n"
        );
        let e = quick(count, Duration::from_secs(1), || {
            read_bytes("ports.ts", text.as_bytes())
        })
        .unwrap_err();
        assert_located(&e, "ports.ts");
        assert_eq!(e.line, 3, "{count}: {e}");
    }
    // the largest accepted count with a huge declared frequency count must not
    // reserve memory for it: the data simply ends early
    let text = format!(
        "[Version] 2.0\n# GHz S RI R 50\n[Number of Ports] {}\n\
         [Number of Frequencies] 99999999999\n[Network Data]\n1 0 0\n[End]\n",
        touchstone::MAX_PORTS
    );
    let e = quick("huge nfreq", Duration::from_secs(1), || {
        read_bytes("ports.ts", text.as_bytes())
    })
    .unwrap_err();
    assert_located(&e, "ports.ts");
}

#[test]
fn an_s0p_and_other_bad_extensions_are_refused() {
    let one_port = b"# GHz S RI R 50\n1 0.5 0\n";
    assert!(read_bytes("good.s1p", one_port).is_ok());
    for name in [
        "zero.s0p",
        "ZERO.S00P",
        "huge.s99999999999p",
        "overflow.s99999999999999999999999p",
        "many.s1001p",
    ] {
        let e = read_bytes(name, one_port).unwrap_err();
        assert_located(&e, name);
    }
    // names that are not of the .sNp form at all are not port counts; the data
    // decides, and a one-port reads
    for name in ["neg.s-1p", "none.sp", "dir.s0p/part.s1p"] {
        check_any(name, one_port);
    }
}

#[test]
fn zero_and_negative_frequencies_are_refused_or_handled() {
    // a negative frequency is refused with its location
    let e = read_bytes("neg.s1p", b"# GHz S RI R 50\n-1 0.5 0\n1 0.5 0\n").unwrap_err();
    assert_eq!((e.line, e.column), (2, 1), "{e}");
    // a zero frequency (DC point) either reads or is refused; if it reads, the
    // figures of every view that applies come out finite or undefined
    for (name, text) in [
        (
            "dc.s1p",
            &b"# GHz S RI R 50\n0 0.5 0\n1 0.4 -0.2\n2 0.3 -0.4\n"[..],
        ),
        (
            "dc.s2p",
            &b"# GHz S RI R 50\n0 0 0 1 0 1 0 0 0\n1 0.1 -0.2 0.8 -0.3 0.8 -0.3 0.1 -0.2\n"[..],
        ),
    ] {
        match read_bytes(name, text) {
            Ok(ts) => figures_are_finite_or_undefined(&ts.network),
            Err(e) => assert_located(&e, name),
        }
    }
}

/// Every view and figure of a network: no panic, and no NaN or infinity anywhere.
fn figures_are_finite_or_undefined(net: &Network) {
    let dc = data_checks(net);
    for v in [dc.passivity_margin, dc.reciprocity_error]
        .into_iter()
        .flatten()
    {
        assert!(v.is_finite());
    }
    for name in network::views_for(net.ports) {
        let Ok(view) = network::view(net, name, &PortMap::default()) else {
            continue;
        };
        let figs = view_figures(&view, &net.freq, None);
        for (k, v) in &figs.scalars {
            assert!(v.is_none_or(f64::is_finite), "{k} = {v:?}");
        }
        for (k, c) in &figs.curves {
            assert!(c.iter().all(|v| v.is_none_or(f64::is_finite)), "{k}");
        }
    }
}

#[test]
fn degenerate_networks_give_undefined_figures_not_nan() {
    let freq = vec![-1e9, 0.0, 1e9, 1e9, 5e8, 2e9, 3e9, 2e9];
    let z0 = vec![50.0, 50.0];
    let c = |re: f64, im: f64| C64::new(re, im);
    // open, short, matched, identity (Z singular) and all-zero blocks, at zero,
    // negative, repeated and falling frequencies
    let blocks = [
        [c(1.0, 0.0), c(0.0, 0.0), c(0.0, 0.0), c(1.0, 0.0)],
        [c(-1.0, 0.0), c(0.0, 0.0), c(0.0, 0.0), c(-1.0, 0.0)],
        [c(0.0, 0.0), c(1.0, 0.0), c(1.0, 0.0), c(0.0, 0.0)],
        [c(0.0, 0.0); 4],
        [
            c(1e300, -1e300),
            c(0.0, 1e-300),
            c(0.0, 1e-300),
            c(-1e300, 0.0),
        ],
        // ill-conditioned: one ulp from the open and the short, and a rank-one S
        // (I − S nearly singular; Z and Y exist but are huge or tiny)
        [
            c(1.0 - f64::EPSILON, 0.0),
            c(0.0, 0.0),
            c(0.0, 0.0),
            c(1.0 - f64::EPSILON, 0.0),
        ],
        [
            c(-1.0 + f64::EPSILON, 0.0),
            c(0.0, 0.0),
            c(0.0, 0.0),
            c(-1.0 + f64::EPSILON, 0.0),
        ],
        [c(0.5, 0.0), c(0.5, 0.0), c(0.5, 0.0), c(0.5, 1e-15)],
    ];
    let s: Vec<C64> = blocks.iter().flatten().copied().collect();
    let net = Network {
        freq,
        ports: 2,
        z0,
        s,
    };
    figures_are_finite_or_undefined(&net);
    // the same degenerate blocks one at a time, on a clean sweep
    for b in &blocks {
        let net = Network {
            freq: vec![1e9, 2e9, 3e9],
            ports: 2,
            z0: vec![50.0, 50.0],
            s: b.iter().chain(b.iter()).chain(b.iter()).copied().collect(),
        };
        figures_are_finite_or_undefined(&net);
    }
}

/// A reader that counts the bytes handed out, to prove a refusal is streamed.
struct Counting<R> {
    inner: R,
    read: u64,
}

impl<R: Read> Read for Counting<R> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        let n = self.inner.read(buf)?;
        self.read += n as u64;
        Ok(n)
    }
}

#[test]
fn a_gigabyte_line_is_refused_after_reading_just_past_the_cap() {
    let gib = 1u64 << 30;
    let mut src = Counting {
        inner: io::repeat(b'7').take(gib),
        read: 0,
    };
    let e = quick("long line", Duration::from_secs(5), || {
        read_reader("long.s1p", BufReader::new(&mut src), Some(gib))
    })
    .unwrap_err();
    assert_located(&e, "long.s1p");
    assert_eq!(e.line, 1, "{e}");
    assert!(e.to_string().contains("at most"), "{e}");
    // the reader stopped within a buffer or two of the cap, not at the end
    let cap = lex::MAX_LINE as u64;
    assert!(
        src.read > cap && src.read <= cap + (1 << 20),
        "read {} bytes for a cap of {cap}",
        src.read
    );
    // a long line after a good header, as a file on disk just above the cap
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("long.s1p");
    {
        use std::io::Write;
        let mut f = io::BufWriter::new(std::fs::File::create(&path).unwrap());
        f.write_all(b"# GHz S RI R 50\n1 0.5 0\n").unwrap();
        let chunk = vec![b' '; 1 << 20];
        for _ in 0..=(lex::MAX_LINE >> 20) {
            f.write_all(&chunk).unwrap();
        }
        f.write_all(b"2 0.5 0\n").unwrap();
    }
    let e = quick("long line on disk", Duration::from_secs(5), || {
        touchstone::read_path(&path)
    })
    .unwrap_err();
    assert_eq!(e.line, 3, "{e}");
}

/// Run `f` on a thread with a small stack (a quarter of a rayon worker's 2 MiB): a
/// recursive parser without a depth limit would overflow it on these inputs (which
/// aborts the process). 512 KiB: the YAML loader overflowed 256 KiB on the
/// 20,000-deep mappings below, but its use does not grow with depth (200,000 deep
/// fitted in 512 KiB when tried), so this is headroom, not a depth limit.
fn on_small_stack<T: Send + 'static>(f: impl FnOnce() -> T + Send + 'static) -> T {
    std::thread::Builder::new()
        .stack_size(512 << 10)
        .spawn(f)
        .expect("spawn")
        .join()
        .expect("no panic")
}

fn load_rules(text: String) -> Result<lcgate::rules::RuleSet, String> {
    let dir = tempfile::tempdir().map_err(|e| e.to_string())?;
    let p = dir.path().join("r.yaml");
    std::fs::write(&p, text).map_err(|e| e.to_string())?;
    lcgate::rules::load(&[p]).map_err(|e| e.to_string())
}

#[test]
fn pathological_rules_are_refused_fast_on_a_small_stack() {
    let wrap = |e: &str| format!("parts:\n  - select: x\n    checks:\n      a: '{e}'\n");
    let cases: Vec<(&str, String)> = vec![
        (
            "5000-deep parentheses",
            wrap(&format!(
                "{}srf{} > 1GHz",
                "(".repeat(5000),
                ")".repeat(5000)
            )),
        ),
        (
            "deep but short parentheses",
            wrap(&format!("{}q{} > 1", "(".repeat(2000), ")".repeat(2000))),
        ),
        (
            "5000 unary minus",
            wrap(&format!("{}q > 1", "-".repeat(5000))),
        ),
        ("1000 not", wrap(&format!("{}q > 1", "not ".repeat(1000)))),
        (
            "20000 terms",
            wrap(&format!("{} > 1", vec!["q(band)"; 20_000].join(" + "))),
        ),
        (
            "1000 nested calls",
            wrap(&format!(
                "{}1{} > 1",
                "max(".repeat(1000),
                ", 1)".repeat(1000)
            )),
        ),
        (
            "deep YAML mappings",
            format!("parts: {}1{}\n", "{a: ".repeat(20_000), "}".repeat(20_000)),
        ),
        (
            "10 MB of one scalar",
            format!("suite: '{}'\nparts: []\n", "x".repeat(10 << 20)),
        ),
    ];
    for (what, text) in cases {
        let got = quick(what, Duration::from_secs(5), || {
            on_small_stack(move || load_rules(text))
        });
        let e = got.err().unwrap_or_else(|| panic!("{what}: loaded"));
        assert!(e.contains("r.yaml:"), "{what}: {e}");
    }
    // an alias bomb: 9 levels of 9 references each would expand to 9^9 nodes
    let mut bomb = String::from("a: &a [x, x, x, x, x, x, x, x, x]\n");
    let mut prev = 'a';
    for c in 'b'..='j' {
        let refs = vec![format!("*{prev}"); 9].join(", ");
        bomb.push_str(&format!("{c}: &{c} [{refs}]\n"));
        prev = c;
    }
    bomb.push_str("parts: []\n");
    let e = quick("alias bomb", Duration::from_secs(5), || {
        on_small_stack(move || load_rules(bomb))
    })
    .expect_err("the bomb must be refused");
    assert!(e.contains("r.yaml:"), "{e}");
}

fn lcgate(args: &[&std::ffi::OsStr]) -> (i32, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_lcgate"))
        .args(args)
        .output()
        .expect("run lcgate");
    let code = out.status.code().expect("exited, not killed by a signal");
    (code, String::from_utf8_lossy(&out.stderr).into_owned())
}

#[test]
fn inspect_refuses_unusable_files_with_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let write = |name: &str, bytes: &[u8]| -> PathBuf {
        let p = d.join(name);
        std::fs::write(&p, bytes).unwrap();
        p
    };
    let cases: Vec<(PathBuf, &str)> = vec![
        (write("cut.s2p", &V1_S2P[..V1_S2P.len() / 2]), "cut.s2p"),
        (write("empty.s1p", b""), "empty.s1p"),
        (write("zero.s0p", b"# GHz S RI R 50\n1 0.5 0\n"), "zero.s0p"),
        (
            write("inf.s1p", b"# GHz S RI R 50\n1 1e999 0\n"),
            "inf.s1p:2:3",
        ),
        (write("bin.s2p", &[0u8, 1, 2, 3, 0xFF, 0xFE]), "bin.s2p"),
        (d.join("missing.s2p"), "missing.s2p"),
        (d.to_path_buf(), ""),
    ];
    for (path, needle) in cases {
        let (code, err) = lcgate(&[std::ffi::OsStr::new("inspect"), path.as_os_str()]);
        assert_eq!(code, 2, "{}: {err}", path.display());
        assert!(err.contains(needle), "{}: {err}", path.display());
    }
    // a good file still inspects, also under a name that is not UTF-8
    let good = write("good.s2p", V1_S2P);
    assert_eq!(
        lcgate(&[std::ffi::OsStr::new("inspect"), good.as_os_str()]).0,
        0
    );
    #[cfg(unix)]
    {
        use std::os::unix::ffi::OsStrExt;
        let odd = d.join(std::ffi::OsStr::from_bytes(b"caf\xe9.s2p"));
        std::fs::write(&odd, V1_S2P).unwrap();
        let (code, err) = lcgate(&[std::ffi::OsStr::new("inspect"), odd.as_os_str()]);
        assert_eq!(code, 0, "{err}");
    }
}

// ---------------------------------------------------------------------------
// A hostile library through `check` (the binary): a link loop, a FIFO with a
// Touchstone name, a file the run may not read, non-UTF-8 names, and the report
// folder that cannot be written.

use std::os::unix::ffi::OsStrExt;
use std::os::unix::fs::PermissionsExt;
use std::os::unix::process::CommandExt;
use std::path::Path;

use lcgate::verdict::{PartStatus, RunReport};

fn data(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data")
        .join(rel)
}

/// The user the run drops to when this test runs as root: root reads a file whatever
/// its mode, so a `chmod 000` file is unreadable only to someone else.
const NOBODY: u32 = 65534;

/// How a `check` ended: exit code (None when killed by a signal), stdout, stderr.
struct Ran {
    code: Option<i32>,
    stdout: String,
    stderr: String,
}

/// Run the binary in `cwd`, optionally as `uid`, with output to files (so a full pipe
/// cannot stall it) and a hang guard: a run still going after two minutes is killed
/// and the test fails (a FIFO opened for reading blocks forever).
fn run_guarded(cwd: &Path, args: &[&std::ffi::OsStr], uid: Option<u32>) -> Ran {
    let logs = tempfile::tempdir().unwrap();
    let (out_p, err_p) = (logs.path().join("out"), logs.path().join("err"));
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_lcgate"));
    cmd.current_dir(cwd)
        .args(args)
        .env("NO_COLOR", "1")
        .stdin(std::process::Stdio::null())
        .stdout(std::fs::File::create(&out_p).unwrap())
        .stderr(std::fs::File::create(&err_p).unwrap());
    if let Some(u) = uid {
        cmd.uid(u).gid(u);
    }
    let mut child = cmd.spawn().expect("spawn lcgate");
    let start = Instant::now();
    let status = loop {
        if let Some(s) = child.try_wait().expect("wait") {
            break s;
        }
        if start.elapsed() > Duration::from_secs(120) {
            let _ = child.kill();
            let _ = child.wait();
            panic!("lcgate {args:?} hangs");
        }
        std::thread::sleep(Duration::from_millis(20));
    };
    Ran {
        code: status.code(),
        stdout: std::fs::read_to_string(&out_p).unwrap_or_default(),
        stderr: std::fs::read_to_string(&err_p).unwrap_or_default(),
    }
}

fn os(s: &str) -> &std::ffi::OsStr {
    std::ffi::OsStr::new(s)
}

fn copy_tree(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for e in std::fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        let t = to.join(e.file_name());
        if e.file_type().unwrap().is_dir() {
            copy_tree(&e.path(), &t);
        } else {
            std::fs::copy(e.path(), &t).unwrap();
        }
    }
}

fn chmod(p: &Path, mode: u32) {
    std::fs::set_permissions(p, std::fs::Permissions::from_mode(mode)).unwrap();
}

/// True when this process can open a file of mode 000 (root, or CAP_DAC_OVERRIDE).
fn reads_anything(probe: &Path) -> bool {
    std::fs::File::open(probe).is_ok()
}

fn parse_report(dir: &Path) -> RunReport {
    let text = std::fs::read_to_string(dir.join("report.json")).expect("report.json");
    serde_json::from_str(&text).expect("report.json parses")
}

fn status_of<'a>(r: &'a RunReport, path: &str) -> &'a lcgate::verdict::PartReport {
    r.parts
        .iter()
        .find(|p| p.path == path)
        .unwrap_or_else(|| panic!("no part {path} in {:?}", names(r)))
}

fn names(r: &RunReport) -> Vec<&str> {
    r.parts.iter().map(|p| p.path.as_str()).collect()
}

#[test]
fn a_hostile_library_is_judged_where_it_can_be_and_never_hangs() {
    let top = tempfile::tempdir().unwrap();
    let d = top.path();
    let lib = d.join("lib");
    let coils = lib.join("coils");
    std::fs::create_dir_all(&coils).unwrap();
    std::fs::create_dir_all(lib.join("caps")).unwrap();
    copy_tree(&data("lib-small-rules"), &d.join("rules"));
    let good = std::fs::read(data("lib-small/coils/L1p0n.s2p")).unwrap();
    std::fs::write(coils.join("L1p0n.s2p"), &good).unwrap();
    std::fs::copy(data("lib-small/caps/C0p5p.s1p"), lib.join("caps/C0p5p.s1p")).unwrap();
    // a good coil and a broken one under names that are not UTF-8 (Latin-1 é, 0xFF)
    std::fs::write(
        coils.join(std::ffi::OsStr::from_bytes(b"L1p0n_caf\xe9.s2p")),
        &good,
    )
    .unwrap();
    std::fs::write(
        coils.join(std::ffi::OsStr::from_bytes(b"L1p0n_bad\xff.s2p")),
        &good[..good.len() / 3],
    )
    .unwrap();
    // a file nobody but its owner may read
    let locked = coils.join("L1p0n_locked.s2p");
    std::fs::write(&locked, &good).unwrap();
    chmod(&locked, 0o000);
    // a FIFO with a Touchstone name: opening it for reading would block forever
    let fifo = coils.join("L1p0n_fifo.s2p");
    let st = Command::new("mkfifo").arg(&fifo).status().expect("mkfifo");
    assert!(st.success());
    // a link loop (a folder linking to its parent) and a link to a good part
    std::os::unix::fs::symlink("..", coils.join("loop")).unwrap();
    std::os::unix::fs::symlink("L1p0n.s2p", coils.join("L1p0n_link.s2p")).unwrap();
    // a folder with a Touchstone name is a folder, not a part
    std::fs::create_dir_all(lib.join("caps/dir.s1p")).unwrap();

    // as root, run as `nobody` so that the mode-000 file really cannot be read;
    // everything else must be readable (and the reports writable) by that user
    let uid = reads_anything(&locked).then_some(NOBODY);
    let out = d.join("out");
    std::fs::create_dir_all(&out).unwrap();
    chmod(&out, 0o777);
    chmod(d, 0o755);

    let report = out.to_str().unwrap();
    let base = [
        "check",
        "lib",
        "--rules",
        "rules",
        "--no-cache",
        "--report",
        report,
    ];

    // links not followed: the loop is not walked, the link to a part is noted
    let args: Vec<&std::ffi::OsStr> = base.iter().map(|s| os(s)).collect();
    let ran = run_guarded(d, &args, uid);
    assert_eq!(ran.code, Some(1), "{}\n{}", ran.stdout, ran.stderr);
    let r = parse_report(&out);
    let bad = "coils/L1p0n_bad\u{FFFD}.s2p";
    let odd = "coils/L1p0n_caf\u{FFFD}.s2p";
    assert_eq!(
        names(&r),
        [
            "caps/C0p5p.s1p",
            "coils/L1p0n.s2p",
            bad,
            odd,
            "coils/L1p0n_locked.s2p"
        ]
    );
    // the good parts are judged (and pass), also under a non-UTF-8 name
    for p in ["caps/C0p5p.s1p", "coils/L1p0n.s2p", odd] {
        let part = status_of(&r, p);
        assert_eq!(part.status, PartStatus::Pass, "{p}: {:?}", part.error);
        assert!(!part.checks.is_empty(), "{p} was judged");
    }
    // each bad one is `unreadable`, with a message naming the file
    let part = status_of(&r, bad);
    assert_eq!(part.status, PartStatus::Unreadable);
    let e = part.error.as_deref().unwrap_or_default();
    assert!(e.contains("L1p0n_bad\u{FFFD}.s2p:"), "{e}");
    let part = status_of(&r, "coils/L1p0n_locked.s2p");
    assert_eq!(part.status, PartStatus::Unreadable);
    let e = part.error.as_deref().unwrap_or_default();
    assert!(
        e.contains("L1p0n_locked.s2p") && e.contains("denied"),
        "{e}"
    );
    // the FIFO and the link are skipped with a note naming them
    assert!(
        ran.stderr
            .contains("coils/L1p0n_fifo.s2p: skipped: not a regular file"),
        "{}",
        ran.stderr
    );
    assert!(
        ran.stderr
            .contains("coils/L1p0n_link.s2p: skipped: symbolic link"),
        "{}",
        ran.stderr
    );
    assert!(!ran.stderr.contains("internal error"), "{}", ran.stderr);
    // the terminal summary names the unreadable parts too
    assert!(ran.stdout.contains("L1p0n_locked.s2p"), "{}", ran.stdout);

    // links followed: the loop becomes an unreadable entry naming it, the link to a
    // good part is judged, the FIFO is still skipped
    let mut args = args.clone();
    args.push(os("--follow-links"));
    let ran = run_guarded(d, &args, uid);
    assert_eq!(ran.code, Some(1), "{}\n{}", ran.stdout, ran.stderr);
    let r = parse_report(&out);
    let part = status_of(&r, "coils/loop");
    assert_eq!(part.status, PartStatus::Unreadable);
    let e = part.error.as_deref().unwrap_or_default();
    assert!(e.contains("coils/loop") && e.contains("link loop"), "{e}");
    assert_eq!(
        status_of(&r, "coils/L1p0n_link.s2p").status,
        PartStatus::Pass
    );
    assert!(
        ran.stderr
            .contains("coils/L1p0n_fifo.s2p: skipped: not a regular file"),
        "{}",
        ran.stderr
    );

    // the bad entries removed, the same library passes: they alone failed the run
    for p in ["L1p0n_locked.s2p", "L1p0n_fifo.s2p", "loop"] {
        std::fs::remove_file(coils.join(p)).unwrap();
    }
    std::fs::remove_file(coils.join(std::ffi::OsStr::from_bytes(b"L1p0n_bad\xff.s2p"))).unwrap();
    let ran = run_guarded(d, &args, uid);
    assert_eq!(ran.code, Some(0), "{}\n{}", ran.stdout, ran.stderr);
}

/// A small good library with its rules in a fresh folder (mode 755, so a dropped
/// user can read it).
fn small_library() -> tempfile::TempDir {
    let top = tempfile::tempdir().unwrap();
    let d = top.path();
    std::fs::create_dir_all(d.join("lib/coils")).unwrap();
    std::fs::copy(
        data("lib-small/coils/L1p0n.s2p"),
        d.join("lib/coils/L1p0n.s2p"),
    )
    .unwrap();
    copy_tree(&data("lib-small-rules"), &d.join("rules"));
    chmod(d, 0o755);
    top
}

/// File names in a folder, sorted.
fn listing(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

const REPORTS: [&str; 4] = ["report.html", "report.json", "report.md", "report.xml"];

#[test]
fn a_report_folder_that_cannot_be_written_is_exit_2_and_keeps_the_old_reports() {
    let top = small_library();
    let d = top.path();
    let check = |report: &Path, uid: Option<u32>| {
        let args = [
            os("check"),
            os("lib"),
            os("--rules"),
            os("rules"),
            os("--no-cache"),
            os("-q"),
            os("--report"),
            report.as_os_str(),
        ];
        run_guarded(d, &args, uid)
    };

    // below a regular file: the folder cannot even be made
    std::fs::write(d.join("plain"), "a file, not a folder").unwrap();
    let below = d.join("plain/out");
    let ran = check(&below, None);
    assert_eq!(ran.code, Some(2), "{}", ran.stderr);
    assert!(
        ran.stderr.contains(below.to_str().unwrap()),
        "{}",
        ran.stderr
    );
    assert_eq!(
        std::fs::read_to_string(d.join("plain")).unwrap(),
        "a file, not a folder"
    );

    // a folder holding last night's reports, then made read-only
    let out = d.join("out");
    let ran = check(&out, None);
    assert_eq!(ran.code, Some(0), "{}", ran.stderr);
    assert_eq!(listing(&out), REPORTS);
    let before: Vec<Vec<u8>> = REPORTS
        .iter()
        .map(|n| std::fs::read(out.join(n)).unwrap())
        .collect();
    chmod(&out, 0o555);
    // root writes into a read-only folder anyway: drop to `nobody`, for whom the
    // folder (owned by root, mode 555) is read-only
    let probe = d.join("probe");
    std::fs::write(&probe, "").unwrap();
    chmod(&probe, 0o000);
    let uid = reads_anything(&probe).then_some(NOBODY);
    let ran = check(&out, uid);
    chmod(&out, 0o755);
    assert_eq!(ran.code, Some(2), "{}", ran.stderr);
    assert!(
        ran.stderr.contains("cannot write the reports"),
        "{}",
        ran.stderr
    );
    assert!(
        ran.stderr
            .contains(out.join("report.json").to_str().unwrap()),
        "names the file: {}",
        ran.stderr
    );
    // every old report is whole and nothing else was left there
    assert_eq!(listing(&out), REPORTS);
    for (n, old) in REPORTS.iter().zip(&before) {
        assert_eq!(&std::fs::read(out.join(n)).unwrap(), old, "{n} changed");
    }

    // a report name taken by a non-empty folder (the rename fails even for root):
    // exit 2 naming it, the reports written before it whole, no temporary files
    std::fs::remove_file(out.join("report.html")).unwrap();
    std::fs::create_dir_all(out.join("report.html/keep")).unwrap();
    let ran = check(&out, None);
    assert_eq!(ran.code, Some(2), "{}", ran.stderr);
    assert!(
        ran.stderr
            .contains(out.join("report.html").to_str().unwrap()),
        "{}",
        ran.stderr
    );
    assert_eq!(listing(&out), REPORTS);
    let r = parse_report(&out);
    assert_eq!(names(&r), ["coils/L1p0n.s2p"]);
    assert!(std::fs::read_to_string(out.join("report.xml"))
        .unwrap()
        .trim_end()
        .ends_with("</testsuites>"));
    assert!(out.join("report.html/keep").is_dir());
}

// ---------------------------------------------------------------------------
// Arithmetic safety through `check`: singular matrices, a 0 Hz point, a negative
// frequency, flat curves, a hole in the band (tests/data/arith/).

/// Every number in a JSON document, with its path.
fn numbers(v: &serde_json::Value, at: &str, out: &mut Vec<(String, f64)>) {
    match v {
        serde_json::Value::Number(n) => out.push((at.to_string(), n.as_f64().unwrap_or(f64::NAN))),
        serde_json::Value::Array(a) => {
            for (i, x) in a.iter().enumerate() {
                numbers(x, &format!("{at}[{i}]"), out);
            }
        }
        serde_json::Value::Object(o) => {
            for (k, x) in o {
                numbers(x, &format!("{at}.{k}"), out);
            }
        }
        _ => {}
    }
}

#[test]
fn undefined_figures_are_null_with_a_reason_never_nan() {
    let out = tempfile::tempdir().unwrap();
    let (lib, rules) = (data("arith/lib"), data("arith/rules.yaml"));
    let args = [
        os("check"),
        lib.as_os_str(),
        os("--rules"),
        rules.as_os_str(),
        os("--no-cache"),
        os("--report"),
        out.path().as_os_str(),
    ];
    let ran = run_guarded(out.path(), &args, None);
    // failures and an unreadable part: exit 1, not 2 (the run was made), not a panic
    assert_eq!(ran.code, Some(1), "{}\n{}", ran.stdout, ran.stderr);
    assert!(!ran.stderr.contains("internal error"), "{}", ran.stderr);

    // report.json is valid JSON (NaN and infinities are not) and every number in it
    // is finite: undefined values are null
    let text = std::fs::read_to_string(out.path().join("report.json")).unwrap();
    let doc: serde_json::Value = serde_json::from_str(&text).expect("valid JSON");
    let mut nums = Vec::new();
    numbers(&doc, "", &mut nums);
    assert!(nums.len() > 100, "the report has figures");
    for (at, x) in &nums {
        assert!(x.is_finite(), "{at} = {x}");
    }
    let r: RunReport = serde_json::from_str(&text).expect("lcgate-report/1");
    assert_eq!(
        names(&r),
        [
            "caps/C0p5p_flat.s1p",
            "caps/C0p5p_match.s1p",
            "caps/C0p5p_neg.s1p",
            "coils/L1p0n_dc.s2p",
            "coils/L1p0n_hole.s2p",
            "coils/flat.s2p",
            "coils/open.s2p",
            "coils/short.s2p",
        ]
    );
    let check = |path: &str, id: &str| -> lcgate::verdict::CheckOutcome {
        let p = status_of(&r, path);
        p.checks
            .iter()
            .find(|c| c.id == id)
            .unwrap_or_else(|| panic!("{path}: no check {id}"))
            .clone()
    };
    use lcgate::verdict::CheckStatus::{Fail, Pass, Undecided};
    // an undefined figure makes its check undecided (never pass or fail) with a
    // reason naming the figure and where
    let undecided = |path: &str, id: &str, figure: &str| {
        let c = check(path, id);
        assert_eq!(c.status, Undecided, "{path} {id}: {c:?}");
        let why = c.reason.unwrap_or_default();
        assert!(
            why.contains(&format!("`{figure}` is undefined")),
            "{path} {id}: {why}"
        );
    };

    // S = I everywhere: Z does not exist and Y = 0, so Z_in = 1/Y_in is undefined;
    // the π-model cannot be fitted, its parameters are null
    let open = status_of(&r, "coils/open.s2p");
    assert_eq!(open.status, PartStatus::Fail);
    for f in ["ls", "rdc", "cs", "q_peak", "fit_error", "l_low"] {
        assert_eq!(open.figures.get(f), Some(&None), "open: {f}");
    }
    undecided("coils/open.s2p", "q-in-band", "q");
    undecided("coils/open.s2p", "l-mid", "l");
    undecided("coils/open.s2p", "q-peak", "q_peak");
    undecided("coils/open.s2p", "shield", "shield_gain");

    // S = −I everywhere: Y does not exist, so the view does not: the part fails with
    // the reason, and every report lists it
    let short = status_of(&r, "coils/short.s2p");
    assert_eq!(short.status, PartStatus::Fail);
    let e = short.error.as_deref().unwrap_or_default();
    assert!(e.contains("single_ended") && e.contains("singular"), "{e}");
    assert!(
        ran.stdout
            .contains("Could not be judged\n  coils/short.s2p"),
        "{}",
        ran.stdout
    );
    let xml = std::fs::read_to_string(out.path().join("report.xml")).unwrap();
    assert!(xml.contains("coils/short.s2p :: judge"), "{xml}");
    let md = std::fs::read_to_string(out.path().join("report.md")).unwrap();
    assert!(md.contains("coils/short.s2p"));

    // one point with S = I inside the band: the figures there are undefined, the
    // band check cannot be decided, everything else of the part is judged
    undecided("coils/L1p0n_hole.s2p", "l-mid", "l");
    undecided("coils/L1p0n_hole.s2p", "q-in-band", "q");
    assert_eq!(check("coils/L1p0n_hole.s2p", "q-peak").status, Pass);

    // a 0 Hz point first: l there (X/ω) is undefined, the rest of the coil passes
    let dc = status_of(&r, "coils/L1p0n_dc.s2p");
    assert_eq!(dc.status, PartStatus::Pass, "{dc:?}");
    assert_eq!(dc.figures.get("l_low"), Some(&None));

    // a frequency-independent network: defined, flat figures, judged normally
    assert_eq!(check("coils/flat.s2p", "q-peak").status, Fail);
    assert_eq!(
        status_of(&r, "coils/flat.s2p").figures.get("srf"),
        Some(&None)
    );

    // resistors have no reactance: c = −1/(ωX) is a division by zero → undefined
    undecided("caps/C0p5p_flat.s1p", "c-mid", "c");
    undecided("caps/C0p5p_match.s1p", "c-mid", "c");

    // a negative frequency is refused with its place
    let neg = status_of(&r, "caps/C0p5p_neg.s1p");
    assert_eq!(neg.status, PartStatus::Unreadable);
    let e = neg.error.as_deref().unwrap_or_default();
    assert!(e.contains("C0p5p_neg.s1p:4:1:"), "{e}");
}
