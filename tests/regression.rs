//! Regression suite: the capacitance of the small layouts in `data/regression/` against stored
//! reference results in `tests/reference/` (one JSON per layout: the dense-reference solve of
//! the same mesh — dense fill and LU, no compression — with the tolerance and the unknown count
//! it was made with).
//!
//! Each test recomputes the compressed extraction and requires every entry within
//! `10 ε` of the reference, relative to the entry itself with the floor
//! `rafter::compare::RESOLVED · √(C_ii C_jj)` for very weak couplings (the `rel_diff` of
//! `rafter verify`). A changed mesh (different unknown count) fails with a request to refresh.
//!
//! Refreshing is deliberate, never silent:
//! `RAFTER_REFRESH_REFERENCES=1 cargo test --release --test regression` recomputes the
//! references by the dense path, writes them, and then fails on purpose, so that a refresh
//! never passes as a green run; inspect `git diff tests/reference` and run again without the
//! variable.

use rafter::extract::{Extraction, Hooks, extract};
use serde::{Deserialize, Serialize};
use std::path::PathBuf;

/// A stored reference result.
#[derive(Serialize, Deserialize)]
struct Reference {
    layout: String,
    tolerance: f64,
    unknowns: usize,
    method: String,
    nets: Vec<String>,
    capacitance: Vec<Vec<f64>>,
}

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn run(name: &str, dense: bool) -> Extraction {
    let path = root().join("data/regression").join(format!("{name}.toml"));
    let layout = rafter::layout::load(&path).unwrap();
    let hooks = Hooks { stage: &mut |_| {}, build: &|_, _| {}, gmres: &mut |_, _, _| {} };
    extract(&layout, 0.0, dense, hooks).unwrap()
}

fn check(name: &str) {
    let file = root().join("tests/reference").join(format!("{name}.json"));
    if std::env::var_os("RAFTER_REFRESH_REFERENCES").is_some() {
        let x = run(name, true);
        let layout =
            rafter::layout::load(&root().join("data/regression").join(format!("{name}.toml"))).unwrap();
        let r = Reference {
            layout: format!("data/regression/{name}.toml"),
            tolerance: layout.solve.tolerance,
            unknowns: x.unknowns,
            method: "dense fill + LU (rafter extract --dense)".into(),
            nets: x.nets.clone(),
            capacitance: x.capacitance.clone(),
        };
        std::fs::write(&file, serde_json::to_string_pretty(&r).unwrap() + "\n").unwrap();
        panic!(
            "refreshed {} — inspect `git diff tests/reference` and rerun without RAFTER_REFRESH_REFERENCES",
            file.display()
        );
    }
    let text = std::fs::read_to_string(&file)
        .unwrap_or_else(|e| panic!("{}: {e} (create it with RAFTER_REFRESH_REFERENCES=1)", file.display()));
    let r: Reference = serde_json::from_str(&text).unwrap();
    let x = run(name, false);
    assert_eq!(
        x.unknowns, r.unknowns,
        "{name}: the mesh changed ({} unknowns, reference {}); if intended, refresh the references",
        x.unknowns, r.unknowns
    );
    assert_eq!(x.nets, r.nets, "{name}: nets changed");
    let (c, d) = (&x.capacitance, &r.capacitance);
    let n = d.len();
    let mut worst = (0.0f64, 0, 0);
    for i in 0..n {
        for j in 0..n {
            let rel = rafter::compare::floored_rel_diff(c[i][j], d[i][j], d[i][i], d[j][j]);
            if rel > worst.0 {
                worst = (rel, i, j);
            }
        }
    }
    eprintln!(
        "{name}: {} unknowns, worst entry ({}, {}) differs by {:.2e}",
        x.unknowns, worst.1, worst.2, worst.0
    );
    assert!(
        worst.0 <= 10.0 * r.tolerance,
        "{name}: C[{}][{}] = {:e} against the reference {:e} ({:.2e} relative, limit {:e})",
        worst.1,
        worst.2,
        c[worst.1][worst.2],
        d[worst.1][worst.2],
        worst.0,
        10.0 * r.tolerance
    );
}

#[test]
fn laminate_pair() {
    check("laminate-pair");
}

#[test]
fn buried_trio() {
    check("buried-trio");
}

#[test]
fn bent_pair() {
    check("bent-pair");
}
