//! The declared minimum Rust version is the true one.
//!
//! Only one toolchain can be installed where the tests run, so the minimum
//! is checked from the lock file instead of by building with an old
//! compiler: every locked package states the oldest Rust it builds with
//! (`rust-version`, Cargo reference, "The rust-version field"), and the
//! workspace's declared `rust-version` must be exactly the highest of them:
//! not lower (the locked dependencies would not build), not higher (the
//! stated minimum would not be the minimum). Our own code is held to the
//! declared version by clippy's `incompatible_msrv` lint, which CI denies
//! with the other warnings. README.md and DEVELOPERS.md must state the same
//! version.

use std::path::Path;
use std::process::Command;

/// A `rust-version` as (major, minor, patch); a missing patch is 0.
fn parse_version(text: &str) -> (u64, u64, u64) {
    let mut parts = text.trim().split('.').map(|p| {
        p.parse::<u64>()
            .unwrap_or_else(|_| panic!("`{text}` is not a Rust version"))
    });
    let major = parts.next().unwrap_or(0);
    let minor = parts.next().unwrap_or(0);
    let patch = parts.next().unwrap_or(0);
    (major, minor, patch)
}

fn show((a, b, c): (u64, u64, u64)) -> String {
    if c == 0 {
        format!("{a}.{b}")
    } else {
        format!("{a}.{b}.{c}")
    }
}

/// `cargo metadata` of the whole workspace, with the versions the lock
/// file pins (`--locked` fails rather than change the lock).
fn metadata() -> serde_json::Value {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let cargo = std::env::var("CARGO").unwrap_or_else(|_| "cargo".to_string());
    let run = |offline: bool| {
        let mut c = Command::new(&cargo);
        c.args(["metadata", "--format-version", "1", "--locked"]);
        if offline {
            c.arg("--offline");
        }
        c.arg("--manifest-path")
            .arg(root.join("Cargo.toml"))
            .output()
            .expect("cargo metadata runs")
    };
    // From the local package cache when it holds every package (no
    // network needed after a build), else fetching what is missing.
    let first = run(true);
    let out = if first.status.success() {
        first
    } else {
        run(false)
    };
    assert!(
        out.status.success(),
        "cargo metadata --locked failed: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).expect("cargo metadata prints JSON")
}

#[test]
fn declared_rust_version_is_the_true_minimum_of_the_locked_packages() {
    let meta = metadata();
    let members: Vec<&str> = meta["workspace_members"]
        .as_array()
        .expect("workspace_members")
        .iter()
        .filter_map(|m| m.as_str())
        .collect();
    let packages = meta["packages"].as_array().expect("packages");
    let mut declared: Option<(u64, u64, u64)> = None;
    let mut needed = (0, 0, 0);
    let mut needed_by = Vec::new();
    for p in packages {
        let id = p["id"].as_str().unwrap_or_default();
        let name = p["name"].as_str().unwrap_or_default();
        let version = p["version"].as_str().unwrap_or_default();
        let rv = p["rust_version"].as_str().map(parse_version);
        if members.contains(&id) {
            let rv =
                rv.unwrap_or_else(|| panic!("workspace member {name} declares no rust-version"));
            if let Some(d) = declared {
                assert_eq!(
                    d,
                    rv,
                    "workspace members declare different rust-versions ({name}: {})",
                    show(rv)
                );
            }
            declared = Some(rv);
        } else if let Some(rv) = rv {
            if rv > needed {
                needed = rv;
                needed_by.clear();
            }
            if rv == needed {
                needed_by.push(format!("{name} {version}"));
            }
        }
    }
    let declared = declared.expect("the workspace has members");
    assert!(
        declared >= needed,
        "Cargo.toml declares rust-version {} but the locked {} need{} Rust {}: raise \
         `rust-version` in Cargo.toml ([workspace.package]), README.md and DEVELOPERS.md to {}",
        show(declared),
        needed_by.join(", "),
        if needed_by.len() == 1 { "s" } else { "" },
        show(needed),
        show(needed)
    );
    assert!(
        declared <= needed,
        "Cargo.toml declares rust-version {} but no locked package needs more than {} ({}): \
         the declared minimum must be the true one; lower it to {} (Cargo.toml, README.md, \
         DEVELOPERS.md)",
        show(declared),
        show(needed),
        needed_by.join(", "),
        show(needed)
    );
}

/// README.md and DEVELOPERS.md state the declared version wherever they
/// name the toolchain ("Rust toolchain (X or newer)").
#[test]
fn documents_state_the_declared_rust_version() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let manifest = std::fs::read_to_string(root.join("Cargo.toml")).expect("Cargo.toml");
    let declared = manifest
        .lines()
        .find_map(|l| {
            let l = l.trim();
            l.strip_prefix("rust-version")
                .and_then(|r| r.trim().strip_prefix('='))
                .map(|v| v.trim().trim_matches('"').to_string())
        })
        .expect("Cargo.toml declares rust-version");
    for doc in ["README.md", "DEVELOPERS.md"] {
        let text = std::fs::read_to_string(root.join(doc)).expect(doc);
        let marker = "Rust toolchain (";
        let stated: Vec<&str> = text
            .match_indices(marker)
            .map(|(i, _)| {
                let rest = &text[i + marker.len()..];
                rest.split_whitespace().next().unwrap_or_default()
            })
            .collect();
        assert!(
            !stated.is_empty(),
            "{doc} does not name the Rust toolchain version"
        );
        for v in stated {
            assert_eq!(
                parse_version(v),
                parse_version(&declared),
                "{doc} says Rust {v}, Cargo.toml declares {declared}"
            );
        }
    }
}
