//! Times `check` (load + evaluate) and `build` (evaluate, plot, typeset, write) of each
//! demo in-process and prints medians with the targets beside them, and the process's
//! peak memory. Run with `cargo bench --bench pipeline`; figures, not pass/fail.

use bridgebook::{calc, package, record, report::Templates};
use std::path::Path;
use std::time::{Duration, Instant};

const CHECK_RUNS: usize = 200;
const BUILD_RUNS: usize = 21;
const CHECK_TARGET: Duration = Duration::from_millis(2);
const BUILD_TARGET: Duration = Duration::from_millis(300);
const MEMORY_TARGET_MB: f64 = 150.0;

fn median(mut v: Vec<Duration>) -> Duration {
    v.sort();
    v[v.len() / 2]
}

/// Peak resident set size of this process (Linux `VmHWM`), in MB.
fn peak_rss_mb() -> Option<f64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kb: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb / 1024.0)
}

fn ms(d: Duration) -> f64 {
    d.as_secs_f64() * 1e3
}

fn main() {
    let designs = Path::new(env!("CARGO_MANIFEST_DIR")).join("designs");
    let mut names: Vec<_> = std::fs::read_dir(&designs)
        .expect("designs/")
        .filter_map(|e| e.ok())
        .map(|e| e.path())
        .filter(|p| p.extension().is_some_and(|x| x == "yaml"))
        .collect();
    names.sort();
    let templates = Templates::builtin();
    let out = std::env::temp_dir().join(format!("bridgebook-bench-{}", std::process::id()));

    println!(
        "{:<22} {:>12} {:>8} {:>7} {:>12} {:>8} {:>7} {:>6}",
        "design", "check median", "target", "ratio", "build median", "target", "ratio", "pages"
    );
    let mut first_build = None;
    let mut changed_builds = Vec::new();
    for path in &names {
        let text = std::fs::read_to_string(path).expect("read design");
        let name = path.file_name().unwrap().to_string_lossy().to_string();
        let parts = record::reader::FolderIncludes(path.parent().unwrap().to_path_buf());
        let check: Vec<Duration> = (0..CHECK_RUNS)
            .map(|_| {
                let t = Instant::now();
                let rec = record::load_str_with(&name, &text, &parts).expect("demo is valid");
                let sheet = calc::evaluate(&rec.design);
                std::hint::black_box(&sheet);
                t.elapsed()
            })
            .collect();
        let mut pages = 0;
        let mut build = |text: &str| {
            let t = Instant::now();
            let rec = record::load_str_with(&name, text, &parts).expect("demo is valid");
            let sheet = calc::evaluate(&rec.design);
            let built = package::build(&rec, &sheet, &templates, &out).expect("build");
            pages = built.pages;
            t.elapsed()
        };
        // The first build of the process parses fonts and fills typst's caches.
        let first = build(&text);
        first_build.get_or_insert((name.clone(), first));
        let builds: Vec<Duration> = (0..BUILD_RUNS).map(|_| build(&text)).collect();
        // A revision that changes the record each time (here a sentence of the
        // notes) defeats part of typst's memoisation, as real edits do.
        for i in 0..BUILD_RUNS {
            let edited = text.replacen("notes: |\n", &format!("notes: |\n  Edit {i}.\n"), 1);
            changed_builds.push(build(&edited));
        }
        let (c, b) = (median(check), median(builds));
        println!(
            "{:<22} {:>9.3} ms {:>5} ms {:>7.2} {:>9.1} ms {:>5} ms {:>7.2} {:>6}",
            name,
            ms(c),
            ms(CHECK_TARGET),
            ms(c) / ms(CHECK_TARGET),
            ms(b),
            ms(BUILD_TARGET),
            ms(b) / ms(BUILD_TARGET),
            pages
        );
    }
    let _ = std::fs::remove_dir_all(&out);
    if let Some((name, d)) = first_build {
        println!(
            "first build in a fresh process ({name}): {:.1} ms (target {} ms, ratio {:.2})",
            ms(d),
            ms(BUILD_TARGET),
            ms(d) / ms(BUILD_TARGET)
        );
    }
    let n = changed_builds.len();
    let changed = median(changed_builds);
    println!(
        "build median with the record edited before each of {n} runs: {:.1} ms (target {} ms, ratio {:.2})",
        ms(changed),
        ms(BUILD_TARGET),
        ms(changed) / ms(BUILD_TARGET)
    );
    match peak_rss_mb() {
        Some(mb) => println!(
            "peak memory {mb:.1} MB (target {MEMORY_TARGET_MB} MB, ratio {:.2})",
            mb / MEMORY_TARGET_MB
        ),
        None => println!("peak memory: not available on this system"),
    }
}
