//! Writes the sample library: `cargo run --release --example make-sample-library -- sample-library`.
//!
//! `--baseline` writes the library as it was when `sample-library/baseline.json` was
//! recorded (before the drifted part was re-extracted). `--explain` prints, per
//! part, the generating model's figures (for checking the scenario's rules).
//! The generator itself is `examples/sample_library/gen.rs`, shared with
//! `tests/sample.rs`, which re-runs it and compares with the committed files.

#[path = "sample_library/gen.rs"]
mod gen;

fn main() {
    let mut out = None;
    let mut variant = gen::Variant::Current;
    let mut explain = false;
    for a in std::env::args().skip(1) {
        match a.as_str() {
            "--baseline" => variant = gen::Variant::Baseline,
            "--explain" => explain = true,
            "-h" | "--help" => {
                println!("usage: make-sample-library [--baseline] DIR | --explain");
                return;
            }
            _ if out.is_none() && !a.starts_with('-') => out = Some(a),
            _ => {
                eprintln!("make-sample-library: unexpected argument `{a}` (usage: make-sample-library [--baseline] DIR | --explain)");
                std::process::exit(2);
            }
        }
    }
    if explain {
        print!("{}", gen::explain(variant));
        return;
    }
    let Some(out) = out else {
        eprintln!("usage: make-sample-library [--baseline] DIR | --explain");
        std::process::exit(2);
    };
    match gen::generate(std::path::Path::new(&out), variant) {
        Ok(files) => println!("wrote {} files under {out}", files.len()),
        Err(e) => {
            eprintln!("make-sample-library: {out}: {e}");
            std::process::exit(1);
        }
    }
}
