//! The visibility-set reader never panics, whatever is on disk: thousands of sets made by
//! mutating the bytes of a valid one (truncating, flipping bits, overwriting and appending
//! bytes, deleting files, editing the manifest's JSON values, planting NaN in the arrays,
//! rewriting `.npy` headers) and pure random files. Each read must return the set or an error
//! whose message names a path; the count of inputs tried is printed.

mod common;

use std::collections::BTreeMap;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::Path;

use beamfloor_report::{read_visset, write_visset};
use common::vis_fixture;
use rand::{Rng, RngCore, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// Inputs per test; a few ms each (the damaged files written, eleven read).
const TRIES: usize = 3000;

/// JSON values likely to break a manifest field.
const JSON_VALUES: &[&str] = &[
    "null",
    "-1",
    "0",
    "1e300",
    "18446744073709551615",
    "4294967296",
    "\"\"",
    "\"<f4\"",
    "\"../data.npy\"",
    "[]",
    "[1, 2]",
    "[18446744073709551615, 2, 2]",
    "{}",
    "true",
    "\"RR\"",
    "[\"XX\"]",
];

fn files_of(dir: &Path) -> BTreeMap<String, Vec<u8>> {
    std::fs::read_dir(dir)
        .unwrap()
        .map(|e| {
            let e = e.unwrap();
            (e.file_name().to_string_lossy().into_owned(), std::fs::read(e.path()).unwrap())
        })
        .collect()
}

/// Replaces a random value of the manifest's JSON with a hostile one.
fn mutate_json(bytes: &[u8], rng: &mut ChaCha8Rng) -> Vec<u8> {
    let Ok(mut v) = serde_json::from_slice::<serde_json::Value>(bytes) else {
        return bytes.to_vec();
    };
    // Walk down a random path of objects and arrays (as a JSON pointer), then replace the
    // value there.
    let mut pointer = String::new();
    let mut node = &v;
    for _ in 0..rng.random_range(1..4) {
        let step = match node {
            serde_json::Value::Object(map) if !map.is_empty() => {
                let (key, next) = map.iter().nth(rng.random_range(0..map.len())).unwrap();
                Some((key.replace('~', "~0").replace('/', "~1"), next))
            }
            serde_json::Value::Array(list) if !list.is_empty() => {
                let i = rng.random_range(0..list.len());
                Some((i.to_string(), &list[i]))
            }
            _ => None,
        };
        let Some((key, next)) = step else { break };
        pointer.push('/');
        pointer.push_str(&key);
        node = next;
    }
    let with = JSON_VALUES[rng.random_range(0..JSON_VALUES.len())];
    if let Some(target) = v.pointer_mut(&pointer) {
        *target = serde_json::from_str(with).unwrap();
    }
    serde_json::to_vec_pretty(&v).unwrap()
}

/// One random damage to one file's bytes (None: delete the file).
fn mutate(name: &str, bytes: &[u8], rng: &mut ChaCha8Rng) -> Option<Vec<u8>> {
    let mut b = bytes.to_vec();
    match rng.random_range(0..9) {
        0 => b.truncate(rng.random_range(0..=b.len())),
        1 => {
            for _ in 0..rng.random_range(1..8) {
                if !b.is_empty() {
                    let i = rng.random_range(0..b.len());
                    b[i] ^= 1 << rng.random_range(0..8);
                }
            }
        }
        2 => {
            if !b.is_empty() {
                let i = rng.random_range(0..b.len());
                b[i] = rng.random();
            }
        }
        3 => {
            let mut extra = vec![0u8; rng.random_range(1..64)];
            rng.fill_bytes(&mut extra);
            b.extend_from_slice(&extra);
        }
        4 => return None,
        5 if name.ends_with(".json") => b = mutate_json(&b, rng),
        6 if name.ends_with(".npy") && b.len() > 128 => {
            // NaN or ±Inf over an aligned f64 in the data part (headers here are 128 bytes).
            let specials = [f64::NAN, f64::INFINITY, f64::NEG_INFINITY, 1e308];
            let x = specials[rng.random_range(0..specials.len())].to_le_bytes();
            let slots = (b.len() - 128) / 8;
            if slots > 0 {
                let at = 128 + 8 * rng.random_range(0..slots);
                b[at..at + 8].copy_from_slice(&x);
            }
        }
        7 if name.ends_with(".npy") => {
            // Rewrite the header's dtype or shape text, keeping its length.
            let text = String::from_utf8_lossy(&b[..b.len().min(128)]).into_owned();
            let swaps = [
                ("<f8", "<f4"),
                ("<c16", "<c08"),
                ("<u4", "<i4"),
                ("|b1", "|u1"),
                ("False", "True "),
                ("(", "["),
            ];
            let (from, to) = swaps[rng.random_range(0..swaps.len())];
            if let Some(i) = text.find(from) {
                if from.len() == to.len() {
                    b[i..i + from.len()].copy_from_slice(to.as_bytes());
                }
            }
            for d in b.iter_mut().take(128) {
                if d.is_ascii_digit() && rng.random_range(0..6) == 0 {
                    *d = b'0' + rng.random_range(0..10u8);
                }
            }
        }
        _ => {
            let mut random = vec![0u8; rng.random_range(0..300)];
            rng.fill_bytes(&mut random);
            b = random;
        }
    }
    Some(b)
}

#[test]
fn mutated_and_random_sets_never_panic() {
    let tmp = tempfile::tempdir().unwrap();
    let pristine_dir = tmp.path().join("pristine");
    write_visset(&pristine_dir, &vis_fixture(4, 3, 3)).unwrap();
    let pristine = files_of(&pristine_dir);
    let names: Vec<String> = pristine.keys().cloned().collect();
    let work = tmp.path().join("work");
    std::fs::create_dir(&work).unwrap();
    let mut rng = ChaCha8Rng::seed_from_u64(0x5e7_f022);
    let (mut valid, mut errors, mut panics) = (0usize, 0usize, Vec::new());
    let mut kinds: BTreeMap<String, usize> = BTreeMap::new();
    // What is on disk in `work`; each attempt rewrites only the files that differ from it.
    let mut on_disk: BTreeMap<String, Vec<u8>> = BTreeMap::new();
    for attempt in 0..TRIES {
        let mut files = pristine.clone();
        for _ in 0..rng.random_range(1..4) {
            let name = names[rng.random_range(0..names.len())].clone();
            let Some(bytes) = files.get(&name) else { continue };
            match mutate(&name, bytes, &mut rng) {
                Some(b) => files.insert(name, b),
                None => files.remove(&name),
            };
        }
        for name in on_disk.keys().filter(|n| !files.contains_key(*n)) {
            std::fs::remove_file(work.join(name)).unwrap();
        }
        for (name, bytes) in &files {
            if on_disk.get(name) != Some(bytes) {
                std::fs::write(work.join(name), bytes).unwrap();
            }
        }
        on_disk = files;
        match catch_unwind(AssertUnwindSafe(|| read_visset(&work))) {
            Ok(Ok(_)) => valid += 1,
            Ok(Err(e)) => {
                errors += 1;
                let text = e.to_string();
                assert!(text.contains("work"), "attempt {attempt}: error names no path: {text}");
                let kind = format!("{e:?}").split([' ', '{', '(']).next().unwrap_or("").to_string();
                *kinds.entry(kind).or_default() += 1;
            }
            Err(_) => panics.push(attempt),
        }
    }
    println!(
        "visibility-set reader: {TRIES} mutated inputs tried, {valid} read as valid, {errors} clear errors, {} panics",
        panics.len()
    );
    println!("errors by kind: {kinds:?}");
    assert!(panics.is_empty(), "panics at attempts {panics:?}");
    // The mutations must reach the deep checks, not only the first one.
    assert!(kinds.len() >= 6, "{kinds:?}");
}

#[test]
fn nan_in_an_unflagged_visibility_is_refused() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("vis");
    let mut vis = vis_fixture(3, 2, 2);
    // Row 0, channel 0, correlation 1 is unflagged in the fixture ((r + 2c + p) % 7 ≠ 0).
    assert!(!vis.flags[[0, 0, 1]]);
    vis.data[[0, 0, 1]].re = f64::NAN;
    // The writer's own validation does not look at data values; the reader must.
    write_visset(&dir, &vis).unwrap();
    let err = read_visset(&dir).unwrap_err().to_string();
    assert!(err.contains("`data`") && err.contains("row 0, channel 0, correlation 1"), "{err}");
    // The same NaN on a flagged sample (row 0, channel 0, correlation 0) is fine.
    let mut vis = vis_fixture(3, 2, 2);
    assert!(vis.flags[[0, 0, 0]]);
    vis.data[[0, 0, 0]].im = f64::NAN;
    write_visset(&dir, &vis).unwrap();
    assert!(read_visset(&dir).is_ok());
}
