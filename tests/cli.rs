//! Integration tests that run the `stockfit` binary (placeholder while written).
#[test]
fn timing() {
    let t = std::time::Instant::now();
    let out = assert_cmd::Command::cargo_bin("stockfit")
        .unwrap()
        .args([
            "pick",
            "examples/geophone-inverting-e96.toml",
            "--json",
            "-",
            "--quiet",
        ])
        .output()
        .unwrap();
    eprintln!(
        "{:?} {:?} {}",
        t.elapsed(),
        out.status,
        assert_cmd::cargo::cargo_bin("stockfit").display()
    );
}
