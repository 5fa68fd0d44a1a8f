//! The parser never panics, whatever the text: random bytes, and valid configs mutated by
//! deleting, duplicating and replacing pieces (which reach deep into the schema and validation).

use std::path::PathBuf;

use beamfloor_experiment::config::parse_config;
use proptest::prelude::*;

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
    #![proptest_config(ProptestConfig { cases: 300, ..ProptestConfig::default() })]

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
