//! Bounded work on hostile input (issue 14), proven here rather than in timed tests: the
//! error-dense inventory (999 000 rows of `x`, 16 MB, seven bad cells a row) and a spec of
//! 60 000 unknown keys (under the 1 MiB limit) are each parsed once in a child process — this
//! binary started again with `STOCKFIT_FILES_CHILD=<case>` — for its own time and peak memory
//! (VmHWM, `/proc/<pid>/status`; time as CPU time on one core where Linux gives it), against the targets: within 2 s and 200 MB. Criterion then
//! times each parse. Invented data.

use criterion::Criterion;
use std::time::{Duration, Instant};
use stockfit::spec::Spec;
use stockfit::stock::inventory::Inventory;

/// The error-dense inventory of the issue: a header and 999 000 rows of `x`.
fn dense_inventory() -> String {
    let mut text = String::from("kind,value,tolerance,qty\n");
    text.push_str(&"x,x,x,x,x,x,x,x\n".repeat(999_000));
    text
}

/// A spec whose `[stage]` holds 60 000 unknown keys after the real ones.
fn unknown_keys_spec() -> String {
    let mut text = String::from(
        "[stage]\nkind = \"inverting\"\nsupply = \"9 V\"\ngain = -10\nload = \"10k\"\nband = [\"20 Hz\", \"20 kHz\"]\n",
    );
    for i in 0..60_000 {
        text.push_str(&format!("k{i} = 1\n"));
    }
    text
}

fn parse(case: &str, text: &str) -> usize {
    match case {
        "dense_inventory" => match Inventory::parse_str(text) {
            Ok(_) => 0,
            Err(e) => e.to_string().len(),
        },
        _ => match Spec::from_toml(text) {
            Ok(_) => 0,
            Err(e) => e.to_string().len(),
        },
    }
}

fn text_of(case: &str) -> String {
    match case {
        "dense_inventory" => dense_inventory(),
        _ => unknown_keys_spec(),
    }
}

/// CPU time this thread has run (`/proc/thread-self/schedstat`, ns), where the system says.
fn cpu_now() -> Option<Duration> {
    let text = std::fs::read_to_string("/proc/thread-self/schedstat").ok()?;
    Some(Duration::from_nanos(
        text.split_whitespace().next()?.parse().ok()?,
    ))
}

fn vm_hwm_kb(pid: u32) -> Option<u64> {
    let status = std::fs::read_to_string(format!("/proc/{pid}/status")).ok()?;
    status
        .lines()
        .find_map(|l| l.strip_prefix("VmHWM:"))
        .and_then(|v| v.trim().trim_end_matches("kB").trim().parse().ok())
}

const CASES: [&str; 2] = ["dense_inventory", "unknown_keys_spec"];

fn main() {
    if let Ok(case) = std::env::var("STOCKFIT_FILES_CHILD") {
        let text = text_of(&case);
        let (started, cpu) = (Instant::now(), cpu_now());
        let report = parse(&case, &text);
        // CPU time on one core where the system gives it (the machine may be shared).
        let took = match (cpu, cpu_now()) {
            (Some(a), Some(b)) => b.saturating_sub(a),
            _ => started.elapsed(),
        };
        // The peak so far, read by the child itself just before it ends.
        let peak = vm_hwm_kb(std::process::id()).unwrap_or(0);
        println!("{} {} {}", took.as_secs_f64(), peak, report);
        return;
    }
    let exe = std::env::current_exe().expect("this bench's path");
    println!("bounded work on hostile input (targets: within 2 s and 200 MB each):");
    for case in CASES {
        let out = std::process::Command::new(&exe)
            .env("STOCKFIT_FILES_CHILD", case)
            .output()
            .expect("the child runs");
        let line = String::from_utf8_lossy(&out.stdout);
        let mut f = line.split_whitespace();
        let secs: f64 = f.next().and_then(|s| s.parse().ok()).unwrap_or(f64::NAN);
        let kb: f64 = f.next().and_then(|s| s.parse().ok()).unwrap_or(f64::NAN);
        let chars: usize = f.next().and_then(|s| s.parse().ok()).unwrap_or(0);
        let met = secs <= 2.0 && kb / 1024.0 <= 200.0;
        println!(
            "  {case}: parsed in {secs:.3} s, peak {:.1} MB (input included), {chars} characters of errors: {}",
            kb / 1024.0,
            if met { "met" } else { "NOT met" }
        );
    }
    let mut c = Criterion::default()
        .sample_size(10)
        .measurement_time(Duration::from_secs(5))
        .configure_from_args();
    for case in CASES {
        let text = text_of(case);
        c.bench_function(case, |b| b.iter(|| parse(case, &text)));
    }
    c.final_summary();
}
