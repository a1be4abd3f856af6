//! The README states what the code does: its figure caption's numbers are
//! those of the current demo, and its Quick start says how to get the
//! `chopwave` command every example uses.

use sim_core::run::assess::{assess, AssessOptions, Assessment};
use sim_core::run::RunOptions;
use sim_core::scenario::{Load, Scenario};
use std::path::Path;

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

fn readme() -> String {
    std::fs::read_to_string(root().join("README.md")).expect("README.md")
}

/// The scenario the figure shows, run as `chopwave demo` runs it: the
/// bundled file, start-up recorded, the exact engine, alternatives on.
fn demo_run(file: &str) -> (Scenario, Assessment) {
    let text = std::fs::read_to_string(root().join("scenarios").join(file)).expect(file);
    let mut s = Scenario::from_json_str(&text).expect("bundled scenario loads");
    s.simulation.record_startup = true;
    let opts = AssessOptions {
        run: RunOptions::default(),
        alternatives: !matches!(s.load, Load::Resistor { .. }),
    };
    let a = assess(&s, &opts).expect("the demo scenario runs");
    (s, a)
}

/// The number written just before `marker` in `text`, and how many
/// decimals it was written with.
fn number_before(text: &str, marker: &str) -> Option<(f64, i32)> {
    let i = text.find(marker)?;
    let token = text[..i].split_whitespace().last()?;
    let token = token.trim_start_matches('(');
    let decimals = token.split_once('.').map_or(0, |(_, d)| d.len() as i32);
    Some((token.parse().ok()?, decimals))
}

/// `v` written with `decimals` decimals.
fn written(v: f64, decimals: i32) -> String {
    format!("{v:.prec$}", prec = decimals.max(0) as usize)
}

const FIGURE: &str = "docs/grow-light-48v-steady.png";
const CAPTION_START: &str = "*The grow-light example:";

#[test]
fn figure_caption_numbers_are_the_demo_s() {
    let text = readme();
    assert!(
        text.contains(&format!("]({FIGURE})")),
        "README.md no longer shows {FIGURE}"
    );
    assert!(root().join(FIGURE).is_file(), "{FIGURE} is missing");
    let caption = text
        .lines()
        .find(|l| l.starts_with(CAPTION_START))
        .expect("README.md has the figure caption line starting `*The grow-light example:`");
    let (s, a) = demo_run("grow-light-48v.json");
    let m = &a.result.metrics;
    let cout = a
        .capacitors
        .iter()
        .find(|c| c.part == "output_capacitor")
        .expect("the grow-light example has an output capacitor");
    // (marker after the number, the demo's value in the caption's unit,
    // what it is, with the JSON field it comes from).
    let figures: [(&str, f64, &str); 6] = [
        (
            " µF X7R capacitor",
            s.output_capacitor.map_or(f64::NAN, |c| c.capacitance_f) * 1e6,
            "nominal output capacitance (scenario output_capacitor.capacitance_f, µF)",
        ),
        (
            " µF left",
            cout.effective_f * 1e6,
            "output capacitance left under DC bias (capacitors[output_capacitor].effective_f, µF)",
        ),
        (
            " V bias",
            cout.average_v,
            "output capacitor voltage (capacitors[output_capacitor].average_v, V)",
        ),
        (
            " mA triangle ripple",
            m.inductor_ripple_pp_a * 1e3,
            "inductor ripple (inductor_ripple_pp_a, mA)",
        ),
        (
            " mA (",
            m.led_current_ripple_pp_a * 1e3,
            "LED ripple (led_current_ripple_pp_a, mA)",
        ),
        (
            " %)",
            m.led_current_ripple_pct,
            "LED ripple (led_current_ripple_pct, %)",
        ),
    ];
    // The caption the current demo calls for, to paste if it drifted.
    let mut wanted = caption.to_string();
    let mut wrong = Vec::new();
    for (marker, value, what) in figures {
        let Some((shown, decimals)) = number_before(caption, marker) else {
            wrong.push(format!(
                "the caption has no number before `{marker}` ({what})"
            ));
            continue;
        };
        // Within the caption's rounding: half a unit of its last digit.
        let half = 0.5 * 10f64.powi(-decimals);
        if (shown - value).abs() > half * (1.0 + 1e-9) {
            let old = format!("{} {}", written(shown, decimals), marker.trim_start());
            let new = format!("{} {}", written(value, decimals), marker.trim_start());
            wanted = wanted.replacen(&old, &new, 1);
            wrong.push(format!(
                "{what}: the caption says {}, the demo gives {value}",
                written(shown, decimals)
            ));
        }
    }
    assert!(
        wrong.is_empty(),
        "README.md's figure caption no longer matches the demo:\n  {}\n\
         Regenerate the figure and update the caption:\n  \
         cargo run --release -- demo --out /tmp/chopwave-demo && \
         cp /tmp/chopwave-demo/grow-light-48v-steady.png {FIGURE}\n\
         then replace the caption line in README.md with:\n{wanted}",
        wrong.join("\n  ")
    );
}

/// Every example calls `chopwave`: the Quick start says how to get it,
/// with a command that names the package that builds that binary.
#[test]
fn quick_start_says_how_to_get_the_chopwave_command() {
    let text = readme();
    let start = text
        .find("## Quick start")
        .expect("README has a Quick start");
    let end = text[start + 3..]
        .find("\n## ")
        .map_or(text.len(), |i| start + 3 + i);
    let quick = &text[start..end];
    assert!(
        quick.contains("cargo install --path sim-cli"),
        "Quick start does not say how to install chopwave"
    );
    assert!(
        quick.contains("target/release/chopwave"),
        "Quick start does not name the built binary"
    );
    // The package at that path builds a binary named chopwave.
    let manifest =
        std::fs::read_to_string(root().join("sim-cli/Cargo.toml")).expect("sim-cli/Cargo.toml");
    assert!(
        manifest.contains("[[bin]]") && manifest.contains("name = \"chopwave\""),
        "sim-cli no longer builds the chopwave binary"
    );
    // Examples elsewhere in the README do use the command.
    assert!(text[end..].contains("chopwave run "));
}
