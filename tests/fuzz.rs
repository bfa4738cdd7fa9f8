//! Fuzzing on stable Rust: generated and mutated inputs fed to every parser (data files in CSV
//! and Parquet, cost sheets in CSV and JSON, the project file, `--groups` expressions,
//! `--favourable` thresholds, `--delimiter`). Every input must end in a result or a named
//! error: a panic is a failure, and the input is kept under the system's temporary folder
//! (acquest-fuzz-crashes) to be made a regression test.
//!
//! `ACQUEST_FUZZ_INPUTS` sets the inputs per parser (default 300, the short run of the test
//! suite); tests/fuzz/run.sh runs the full one. `ACQUEST_FUZZ_SEED` changes the seed, and
//! `ACQUEST_FUZZ_ONLY=csv,parquet` runs those parsers alone. An input that aborts the process
//! (an allocation that fails cannot be caught) is left as `NAME-current` there.

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use acquest::data::costs;
use acquest::data::Dataset;
use acquest::settings::{parse_comparison, parse_delimiter, parse_groups, Choices, Settings};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// Longest time one input may take before it counts as a hang.
const TIME_LIMIT: Duration = Duration::from_secs(10);

/// Pieces that parsers trip on, spliced into inputs.
const TOKENS: &[&[u8]] = &[
    b",",
    b";",
    b"\t",
    b" ",
    b"\"",
    b"\"\"",
    b"\n",
    b"\r\n",
    b"\r",
    b"\xef\xbb\xbf",
    b"\xff\xfe",
    b"\xe9",
    b"\xc3\xa9",
    b"\x00",
    b"NaN",
    b"inf",
    b"-inf",
    b"1e308",
    b"1e-320",
    b"1,234",
    b"0,75",
    b"-0",
    b"?",
    b"NA",
    b"=",
    b"<=",
    b">=",
    b">",
    b"<",
    b"*",
    b"[",
    b"]",
    b"{",
    b"}",
    b"yes",
    b"no",
    b"a",
    b"b",
    b"g",
    b"y",
    b"x",
    b"feature",
    b"rows",
    b"18446744073709551616",
    b"-1",
    b"99999999999999999999999",
    b"PAR1",
    b"#",
    b"'",
    b"\\",
];

fn seed() -> u64 {
    std::env::var("ACQUEST_FUZZ_SEED")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(20261203)
}

fn inputs_per_parser() -> usize {
    std::env::var("ACQUEST_FUZZ_INPUTS")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(300)
}

/// A mutation of `base`: a few splices of tokens or random bytes, deletions, duplications.
fn mutate(rng: &mut ChaCha8Rng, base: &[u8]) -> Vec<u8> {
    let mut out = base.to_vec();
    for _ in 0..rng.gen_range(1..6) {
        let at = if out.is_empty() {
            0
        } else {
            rng.gen_range(0..=out.len())
        };
        match rng.gen_range(0..6) {
            0 | 1 => {
                let token = TOKENS[rng.gen_range(0..TOKENS.len())];
                out.splice(at..at, token.iter().copied());
            }
            2 => {
                let end = (at + rng.gen_range(0..20)).min(out.len());
                out.drain(at..end);
            }
            3 => {
                let end = (at + rng.gen_range(0..40)).min(out.len());
                let piece: Vec<u8> = out[at..end].to_vec();
                out.splice(at..at, piece);
            }
            4 => {
                let byte: u8 = rng.gen();
                out.insert(at, byte);
            }
            _ => {
                if at < out.len() {
                    out[at] = rng.gen();
                }
            }
        }
    }
    out
}

/// Runs `parse` on every input, catching panics and timing each; returns the inputs that
/// panicked or ran over the time limit.
fn run_parser(name: &str, inputs: impl Iterator<Item = Vec<u8>>, parse: impl Fn(&[u8])) -> usize {
    let only = std::env::var("ACQUEST_FUZZ_ONLY").unwrap_or_default();
    if !only.is_empty() && !only.split(',').any(|o| o == name) {
        return 0;
    }
    let crashes = std::env::temp_dir().join("acquest-fuzz-crashes");
    let _ = std::fs::create_dir_all(&crashes);
    // The input under test, kept until it is done: an abort (an allocation that fails) ends
    // the process, and leaves this file behind.
    let current = crashes.join(format!("{name}-current"));
    let (mut count, mut bad, mut slowest) = (0usize, 0usize, Duration::ZERO);
    let started = Instant::now();
    for input in inputs {
        count += 1;
        if count % 100_000 == 0 {
            eprintln!("{name}: {count} inputs so far");
        }
        // Only for the readers of files, whose native code can abort; a write per input would
        // slow the in-memory parsers a hundredfold.
        if name.starts_with("csv") || name == "parquet" {
            let _ = std::fs::write(&current, &input);
        }
        let begun = Instant::now();
        let outcome = catch_unwind(AssertUnwindSafe(|| parse(&input)));
        let took = begun.elapsed();
        slowest = slowest.max(took);
        if outcome.is_err() || took > TIME_LIMIT {
            bad += 1;
            let _ = std::fs::create_dir_all(&crashes);
            let file = crashes.join(format!("{name}-{count}"));
            let _ = std::fs::write(&file, &input);
            eprintln!(
                "{name}: input {count} {} (kept as {})",
                if took > TIME_LIMIT {
                    "ran over the time limit"
                } else {
                    "panicked"
                },
                file.display()
            );
        }
    }
    let _ = std::fs::remove_file(&current);
    println!(
        "{name}: {count} inputs, {bad} panics or hangs, {:.1} s, slowest {:.3} s",
        started.elapsed().as_secs_f64(),
        slowest.as_secs_f64()
    );
    bad
}

/// Generated inputs: mutations of the seeds, every so often of an earlier mutation.
fn generated(seeds: Vec<Vec<u8>>, n: usize, stream: u64) -> impl Iterator<Item = Vec<u8>> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed() ^ stream);
    let mut last = seeds[0].clone();
    (0..n).map(move |k| {
        let base = if k % 4 == 3 {
            last.clone()
        } else {
            seeds[k % seeds.len()].clone()
        };
        last = mutate(&mut rng, &base);
        last.clone()
    })
}

fn small_csv() -> Vec<u8> {
    let mut text = String::from("x,c,g,y\n");
    for i in 0..120 {
        text += &format!(
            "{},{},{},{}\n",
            i % 17,
            ["p", "q", "r"][i % 3],
            if i % 4 == 0 { "b" } else { "a" },
            if i % 3 == 0 { "yes" } else { "no" }
        );
    }
    text.into_bytes()
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("acquest-fuzz-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    dir.join(name)
}

/// The settings of a data file whose target is `y` (favourable `yes`) and groups `g`.
fn settings_of(path: &Path) -> acquest::error::Result<Settings> {
    Settings::from_choices(Choices {
        data: Some(path.to_path_buf()),
        target: Some("y".into()),
        favourable: Some("yes".into()),
        protected: Some("g".into()),
        ..Choices::default()
    })
}

fn load(path: &Path) {
    if let Ok(settings) = settings_of(path) {
        let _ = Dataset::load(&settings);
    }
}

/// Every input the fuzzing found a panic with (tests/fuzz/crashes) now ends in a named error.
#[test]
fn inputs_that_once_panicked_end_in_a_named_error() {
    let folder = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fuzz/crashes");
    let mut seen = 0;
    for entry in std::fs::read_dir(&folder).unwrap() {
        let path = entry.unwrap().path();
        let settings = settings_of(&path).unwrap();
        let outcome = catch_unwind(AssertUnwindSafe(|| Dataset::load(&settings)));
        let error = outcome
            .unwrap_or_else(|_| panic!("{} panics again", path.display()))
            .err()
            .unwrap_or_else(|| panic!("{} reads as data", path.display()));
        assert!(!error.to_string().is_empty());
        seen += 1;
    }
    assert!(seen >= 30, "the crash inputs are there");
}

#[test]
fn every_parser_ends_in_a_result_or_a_named_error() {
    let n = inputs_per_parser();
    let mut bad = 0;

    // Data files in CSV: the loader and the schema on top of it.
    let csv_path = scratch("data.csv");
    let mut csv_seeds = vec![small_csv()];
    csv_seeds.push(
        small_csv()
            .iter()
            .map(|&b| if b == b',' { b';' } else { b })
            .collect(),
    );
    csv_seeds.push([b"\xef\xbb\xbf".as_slice(), &small_csv()].concat());
    csv_seeds.push(
        String::from_utf8(small_csv())
            .unwrap()
            .replace('\n', "\r\n")
            .into_bytes(),
    );
    bad += run_parser("csv", generated(csv_seeds, n, 1), |bytes| {
        std::fs::write(&csv_path, bytes).unwrap();
        load(&csv_path);
    });

    // Shapes no mutation reaches: a 50 MB line, 10,000 columns.
    let wide_path = scratch("wide.csv");
    bad += run_parser(
        "csv-shapes",
        [
            {
                let mut t = b"x,g,y\n".to_vec();
                t.extend(std::iter::repeat_n(b'7', 50 << 20));
                t.extend(b",a,yes\n1,b,no\n");
                t
            },
            {
                let header: Vec<String> = (0..10_000).map(|i| format!("c{i}")).collect();
                let row: Vec<String> = (0..10_000).map(|i| (i % 7).to_string()).collect();
                format!(
                    "{},g,y\n{},a,yes\n{},b,no\n",
                    header.join(","),
                    row.join(","),
                    row.join(",")
                )
                .into_bytes()
            },
        ]
        .into_iter(),
        |bytes| {
            std::fs::write(&wide_path, bytes).unwrap();
            load(&wide_path);
        },
    );

    // Data files in Parquet: the CSV seed written as Parquet, then mutated.
    let parquet_seed = {
        use polars::prelude::{CsvReadOptions, ParquetWriter, SerReader};
        let csv = scratch("seed.csv");
        std::fs::write(&csv, small_csv()).unwrap();
        let mut frame = CsvReadOptions::default()
            .with_has_header(true)
            .try_into_reader_with_file_path(Some(csv))
            .unwrap()
            .finish()
            .unwrap();
        let mut bytes = Vec::new();
        ParquetWriter::new(&mut bytes).finish(&mut frame).unwrap();
        bytes
    };
    let parquet_path = scratch("data.parquet");
    bad += run_parser(
        "parquet",
        generated(vec![parquet_seed.clone()], n, 2).chain([
            parquet_seed[..parquet_seed.len() / 2].to_vec(),
            b"PAR1".to_vec(),
        ]),
        |bytes| {
            std::fs::write(&parquet_path, bytes).unwrap();
            load(&parquet_path);
        },
    );

    // Cost sheets in CSV and in JSON.
    let sheet = Path::new("costs.csv");
    let csv_sheet = b"name,kind,column,per_row,fixed,max_rows,step,sensitive,note\n\
        more,rows,,1.5,100,3000,500,no,\n\
        score,feature,work_sample,5,200,,,yes,\"a, note\"\n"
        .to_vec();
    let json_sheet = br#"{"options": [{"name": "more", "kind": "rows", "per_row": 1.5, "max_rows": 3000, "step": 500}, {"name": "score", "kind": "feature", "column": "work_sample", "per_row": 5, "sensitive": true}]}"#.to_vec();
    bad += run_parser(
        "cost-sheet",
        generated(vec![csv_sheet, json_sheet], n, 3),
        |bytes| {
            let _ = costs::parse_cost_sheet(&String::from_utf8_lossy(bytes), sheet);
        },
    );

    // The project file.
    let project = b"data = \"applications.csv\"\ntarget = \"shortlisted\"\nfavourable = \"yes\"\n\
        protected = \"disability\"\nrepeats = 10\nbudget = 20000\ngroups = \"young=<=25;older=>25\"\n\
        hold-features = [\"a\", \"b\"]\n"
        .to_vec();
    bad += run_parser("project", generated(vec![project], n, 4), |bytes| {
        if let Ok(choices) =
            Choices::from_project_text(&String::from_utf8_lossy(bytes), Path::new("acquest.toml"))
        {
            let _ = Settings::from_choices(choices);
        }
    });

    // --groups expressions, --favourable thresholds, --delimiter.
    let expressions = vec![
        b"female=A92,A95;male=*".to_vec(),
        b"young=<=25;older=>25".to_vec(),
        b"25 or younger=<=25;over 25=>25".to_vec(),
    ];
    bad += run_parser("groups", generated(expressions, n, 5), |bytes| {
        let _ = parse_groups(&String::from_utf8_lossy(bytes));
    });
    let thresholds = vec![b">=10".to_vec(), b"<0.5".to_vec(), b">50K".to_vec()];
    bad += run_parser("favourable", generated(thresholds, n, 6), |bytes| {
        let _ = parse_comparison(&String::from_utf8_lossy(bytes));
    });
    let delimiters = vec![b";".to_vec(), b"tab".to_vec(), b"space".to_vec()];
    bad += run_parser("delimiter", generated(delimiters, n, 7), |bytes| {
        let _ = parse_delimiter(&String::from_utf8_lossy(bytes));
    });

    let _ = std::fs::remove_dir_all(csv_path.parent().unwrap());
    assert_eq!(bad, 0, "inputs panicked or hung: see the lines above");
}
