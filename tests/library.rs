//! The crate used as a library does the whole job the binary does: a spec with a `[lock]`
//! table and an inventory given as bytes, through `stockfit::pick`, give the same builds —
//! to the byte of the JSON document — as `stockfit pick` on the files.

use std::path::Path;
use std::sync::Arc;
use stockfit::analysis::yield_mc::YieldOptions;
use stockfit::pick::{self, Options};
use stockfit::report::json;

fn data(name: &str) -> std::path::PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data")
        .join(name)
}

#[test]
fn the_library_gives_the_binarys_builds() {
    let spec_bytes = std::fs::read(data("lib-lock-inverting.toml")).unwrap();
    let csv = std::fs::read(data("lib-drawer.csv")).unwrap();

    let spec = stockfit::Spec::from_bytes(&spec_bytes).unwrap();
    let inventory = Arc::new(stockfit::stock::inventory::parse_bytes(&csv).unwrap());
    let mut asked = Vec::new();
    let stock = pick::resolve_stock::<()>(&spec, None, &mut |path| {
        asked.push(path.to_string());
        Ok(inventory.clone())
    })
    .unwrap();
    // One inventory named twice is loaded once.
    assert_eq!(asked, ["lib-drawer.csv"]);
    let circuit = stockfit::circuit::circuit_for(spec.stage);
    let locks = pick::resolve_locks(&spec, circuit, &stock.stock, &[]).unwrap();
    assert_eq!(locks.len(), 1);
    let options = Options {
        top: 4,
        yield_options: Some(YieldOptions {
            samples: 500,
            seed: 7,
            distribution: spec.stock.distribution,
        }),
        ..Options::default()
    };
    let picked = pick::pick(&spec, &stock.stock, &locks, &options, &mut |_| {}).unwrap();
    assert!(picked.diagnosis.is_none() && !picked.builds.is_empty());
    // The lock is kept: r_in is the 47 kΩ on the board, not a part from the drawer.
    let r_in = &picked.builds[0].build.parts[0];
    assert!(r_in.locked && r_in.value == 47e3, "{r_in:?}");
    let library = json::builds(&spec, circuit, &picked.builds, picked.proven);

    let out = assert_cmd::Command::cargo_bin("stockfit")
        .unwrap()
        .args([
            "pick", "--top", "4", "--yield", "500", "--seed", "7", "--json", "-",
        ])
        .arg(data("lib-lock-inverting.toml"))
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let binary = String::from_utf8(out.stdout).unwrap();
    assert_eq!(
        binary.trim_end(),
        library,
        "the binary and the library differ"
    );
    // Noise, the DC budget and the yield are complete in both.
    for field in ["\"noise\"", "\"dc_budget\"", "\"yield\""] {
        assert!(library.contains(field), "{field}");
    }
}
