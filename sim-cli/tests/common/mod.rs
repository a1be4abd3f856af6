//! Helpers shared by the CLI test binaries (each says `mod common;`):
//! running `chopwave`, reading what it printed, scratch folders, the
//! bundled scenarios, and the files a run or study writes.

// Each test binary uses only some of these.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// The `chopwave` binary under test, as a command to add arguments to.
pub fn chopwave() -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_chopwave"));
    // The CI environment may set RUST_BACKTRACE; no user input may ever
    // produce one, so keep it set to catch a panic's backtrace.
    c.env("RUST_BACKTRACE", "1");
    c
}

/// Runs `chopwave` with `args` and collects its exit status and output.
pub fn run(args: &[&str]) -> Output {
    chopwave()
        .args(args)
        .output()
        .expect("the chopwave binary runs")
}

/// [`run`] with owned arguments.
pub fn run_owned(args: &[String]) -> Output {
    run(&args.iter().map(String::as_str).collect::<Vec<_>>())
}

/// Printed bytes as text (invalid UTF-8 replaced).
pub fn text(b: &[u8]) -> String {
    String::from_utf8_lossy(b).into_owned()
}

/// What a run printed on standard output.
pub fn stdout(o: &Output) -> String {
    text(&o.stdout)
}

/// What a run printed on standard error.
pub fn stderr(o: &Output) -> String {
    text(&o.stderr)
}

/// A fresh, empty scratch folder for one test, named after the test
/// binary, `name` and this process.
pub fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!(
        "chopwave-{}-{name}-{}",
        env!("CARGO_CRATE_NAME"),
        std::process::id()
    ));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// The workspace root (where `scenarios/` is).
pub fn workspace_root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .expect("sim-cli sits in the workspace")
        .to_path_buf()
}

/// The folder of the bundled example scenarios.
pub fn scenarios_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../scenarios")
}

/// The path of the bundled scenario file `name`, as an argument.
pub fn scenario(name: &str) -> String {
    scenarios_dir().join(name).display().to_string()
}

/// A file's bytes; panics naming the file when it cannot be read.
pub fn read(p: &Path) -> Vec<u8> {
    std::fs::read(p).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
}

/// The width and height of a PNG, from its header.
pub fn png_size(p: &Path) -> (u32, u32) {
    let dec = png::Decoder::new(std::io::BufReader::new(std::fs::File::open(p).unwrap()));
    let r = dec.read_info().unwrap();
    let i = r.info();
    (i.width, i.height)
}

/// A PNG decoded: width, height, pixels and colour type.
pub fn decode_png(p: &Path) -> (u32, u32, Vec<u8>, png::ColorType) {
    let file = std::fs::File::open(p).unwrap_or_else(|e| panic!("{}: {e}", p.display()));
    let mut reader = png::Decoder::new(std::io::BufReader::new(file))
        .read_info()
        .unwrap();
    let mut buf = vec![0; reader.output_buffer_size()];
    let info = reader.next_frame(&mut buf).unwrap();
    buf.truncate(info.buffer_size());
    (info.width, info.height, buf, info.color_type)
}

/// The arguments of a slow study (the reference engine on `threads`
/// threads, no plots, quiet) sweeping the grow-light example by `vary`
/// into `out`, then `extra`: long enough to interrupt.
pub fn slow_sweep(out: &Path, vary: &str, threads: usize, extra: &[&str]) -> Vec<String> {
    let mut a = vec![
        "sweep".to_string(),
        scenario("grow-light-48v.json"),
        "--vary".into(),
        vary.into(),
        "--engine".into(),
        "reference".into(),
        "--threads".into(),
        threads.to_string(),
        "--no-plots".into(),
        "-q".into(),
        "--out".into(),
        out.display().to_string(),
    ];
    a.extend(extra.iter().map(|s| s.to_string()));
    a
}
