//! The parser never panics, whatever the text: random bytes, valid configs mutated line by line
//! (deleting, duplicating and replacing pieces, which reach deep into the schema and
//! validation), and valid and bad configs mutated byte by byte (flips, cuts, splices, hostile
//! tokens). The byte-level test prints how many inputs it tried and what became of them.

use std::path::PathBuf;

use std::collections::BTreeMap;
use std::panic::{catch_unwind, AssertUnwindSafe};

use beamfloor_experiment::config::parse_config;
use beamfloor_experiment::run::estimate_memory;
use proptest::prelude::*;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

fn seed_texts() -> Vec<String> {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../..");
    ["configs/demo.toml", "configs/minimal.toml"]
        .iter()
        .map(|p| std::fs::read_to_string(root.join(p)).unwrap())
        .collect()
}

/// Values likely to break numeric and structural rules.
const REPLACEMENTS: &[&str] = &[
    "-1",
    "0",
    "nan",
    "inf",
    "-inf",
    "1e308",
    "\"x\"",
    "[]",
    "[1.0]",
    "[1, 2, 3]",
    "{}",
    "true",
    "9223372036854775807",
    "-9223372036854775808",
    "1979-05-27T07:32:00Z",
    "\"\"",
    "[[1.0, 2.0]]",
    "\"log-spiral\"",
    "{ a = 1 }",
    "0.0",
    "4294967296",
];

#[derive(Debug, Clone)]
enum Edit {
    /// Replace the value on line `line` (text after the first `=`) with a replacement.
    Value { line: usize, with: usize },
    /// Delete line `line`.
    Delete { line: usize },
    /// Duplicate line `line`.
    Duplicate { line: usize },
    /// Cut the text at a fraction of its length.
    Truncate { at_permille: usize },
    /// Insert an arbitrary short string at line `line`.
    Insert { line: usize, text: String },
}

fn edit_strategy() -> impl Strategy<Value = Edit> {
    prop_oneof![
        (0usize..400, 0..REPLACEMENTS.len()).prop_map(|(line, with)| Edit::Value { line, with }),
        (0usize..400).prop_map(|line| Edit::Delete { line }),
        (0usize..400).prop_map(|line| Edit::Duplicate { line }),
        (0usize..1000).prop_map(|at_permille| Edit::Truncate { at_permille }),
        (0usize..400, "[a-z_\\[\\]=.\" 0-9-]{0,24}")
            .prop_map(|(line, text)| Edit::Insert { line, text }),
    ]
}

fn apply(text: &str, edits: &[Edit]) -> String {
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    for edit in edits {
        if lines.is_empty() {
            break;
        }
        let n = lines.len();
        match edit {
            Edit::Value { line, with } => {
                let l = &mut lines[line % n];
                if let Some(eq) = l.find('=') {
                    *l = format!("{}= {}", &l[..eq], REPLACEMENTS[*with]);
                }
            }
            Edit::Delete { line } => {
                lines.remove(line % n);
            }
            Edit::Duplicate { line } => {
                let copy = lines[line % n].clone();
                lines.insert(line % n, copy);
            }
            Edit::Truncate { at_permille } => {
                let joined = lines.join("\n");
                let mut cut = joined.len() * at_permille / 1000;
                while !joined.is_char_boundary(cut) {
                    cut -= 1;
                }
                lines = joined[..cut].lines().map(str::to_string).collect();
            }
            Edit::Insert { line, text } => lines.insert(line % n, text.clone()),
        }
    }
    lines.join("\n")
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 1000, ..ProptestConfig::default() })]

    #[test]
    fn arbitrary_text_never_panics(text in "\\PC{0,200}") {
        let _ = parse_config(&text, "fuzz.toml");
    }

    #[test]
    fn mutated_configs_never_panic(which in 0usize..2, edits in prop::collection::vec(edit_strategy(), 1..6)) {
        let text = apply(&seed_texts()[which], &edits);
        match parse_config(&text, "fuzz.toml") {
            // Whatever is accepted must also write out and read back equal.
            Ok(config) => {
                let resolved = config.to_toml_string().expect("accepted configs serialize");
                let again = parse_config(&resolved, "resolved.toml").expect("resolved text parses");
                prop_assert_eq!(again, config);
            }
            // Every message carries a location.
            Err(e) => prop_assert!(e.to_string().starts_with("fuzz.toml:"), "{}", e),
        }
    }
}

/// Tokens spliced into configs by the byte-level mutator.
const TOKENS: &[&str] = &[
    "=",
    "[",
    "]",
    "[[",
    "]]",
    "\"",
    "'",
    "\n",
    "#",
    ",",
    ".",
    "{",
    "}",
    "nan",
    "-inf",
    "1e999",
    "-0",
    "0x10",
    "1_000",
    "\"\"\"",
    "[[strategy]]\n",
    "[[sky.source]]\n",
    "[imaging]\n",
    "\\u0000",
    "é",
    "\u{feff}",
    "image_size_px = 32768\n",
    "channels = 4294967295\n",
    "scales_px = [0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13]\n",
];

/// One random byte-level damage.
fn mutate_bytes(bytes: &mut Vec<u8>, rng: &mut ChaCha8Rng) {
    let len = bytes.len();
    match rng.random_range(0..7) {
        0 if len > 0 => {
            let i = rng.random_range(0..len);
            bytes[i] ^= 1 << rng.random_range(0..8);
        }
        1 if len > 0 => {
            let a = rng.random_range(0..len);
            let b = (a + rng.random_range(0..40)).min(len);
            bytes.drain(a..b);
        }
        2 if len > 0 => {
            let a = rng.random_range(0..len);
            let b = (a + rng.random_range(0..80)).min(len);
            let piece = bytes[a..b].to_vec();
            let at = rng.random_range(0..=bytes.len());
            bytes.splice(at..at, piece);
        }
        3 => {
            let token = TOKENS[rng.random_range(0..TOKENS.len())].as_bytes();
            let at = rng.random_range(0..=len);
            bytes.splice(at..at, token.iter().copied());
        }
        4 => bytes.truncate(rng.random_range(0..=len)),
        5 if len > 0 => {
            let i = rng.random_range(0..len);
            bytes[i] = rng.random();
        }
        _ => {
            // Swap two lines.
            let text = String::from_utf8_lossy(bytes).into_owned();
            let mut lines: Vec<&str> = text.lines().collect();
            if lines.len() > 1 {
                let (i, j) = (rng.random_range(0..lines.len()), rng.random_range(0..lines.len()));
                lines.swap(i, j);
            }
            *bytes = lines.join("\n").into_bytes();
        }
    }
}

#[test]
fn thousands_of_byte_mutations_never_panic() {
    const TRIES: usize = 4000;
    let mut seeds = seed_texts();
    let bad = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/bad_configs");
    let mut bad_files: Vec<_> =
        std::fs::read_dir(&bad).unwrap().map(|e| e.unwrap().path()).collect();
    bad_files.sort();
    seeds.extend(bad_files.iter().map(|p| std::fs::read_to_string(p).unwrap()));
    let mut rng = ChaCha8Rng::seed_from_u64(0xc0f_f022);
    let (mut accepted, mut rejected, mut panics) = (0usize, 0usize, Vec::new());
    let mut kinds: BTreeMap<String, usize> = BTreeMap::new();
    for attempt in 0..TRIES {
        let mut bytes = seeds[rng.random_range(0..seeds.len())].clone().into_bytes();
        for _ in 0..rng.random_range(1..5) {
            mutate_bytes(&mut bytes, &mut rng);
        }
        let text = String::from_utf8_lossy(&bytes).into_owned();
        let outcome = catch_unwind(AssertUnwindSafe(|| {
            parse_config(&text, "fuzz.toml")
                .map(|config| {
                    // The memory estimate takes any accepted config, however large.
                    estimate_memory(&config, config.array.layout.antenna_count(), 2).total_bytes
                })
                .map_err(Box::new)
        }));
        match outcome {
            Ok(Ok(_)) => accepted += 1,
            Ok(Err(e)) => {
                rejected += 1;
                let message = e.to_string();
                assert!(
                    message.starts_with("fuzz.toml:"),
                    "attempt {attempt}: unlocated: {message}"
                );
                for p in e.problems() {
                    let kind =
                        format!("{p:?}").split([' ', '{', '(']).next().unwrap_or("").to_string();
                    *kinds.entry(kind).or_default() += 1;
                }
            }
            Err(_) => panics.push(attempt),
        }
    }
    println!(
        "config parser: {TRIES} byte-mutated inputs tried ({} seed files), {accepted} accepted, {rejected} rejected with located errors, {} panics",
        seeds.len(),
        panics.len()
    );
    println!("problems by kind: {kinds:?}");
    assert!(panics.is_empty(), "panics at attempts {panics:?}");
    assert!(kinds.len() >= 5 && accepted > 0, "{kinds:?}, {accepted} accepted");
}
