//! The Slurm side without a cluster: array index lists as `sbatch --array` takes them and
//! `squeue` prints them, the queue parser, and the batch script. Formats are those of Slurm's
//! sbatch and squeue manual pages (`--array=0-15`, `0,6,16-32`, `0-15:4`, `0-15%4`; squeue's
//! `%F` array job id, `%K` array task id(s), `%t` compact state such as PD, R, CG).
//! The real cluster run is `scripts/test-sweep-slurm.sh`.

use std::path::{Path, PathBuf};

use beamfloor_experiment::sweep::slurm::{
    array_spec, batch_script, parse_array_indices, parse_squeue, shell_word, QueueState,
    SlurmOptions,
};
use beamfloor_experiment::sweep::SweepFolder;

#[test]
fn index_lists_compress_and_parse_back() {
    assert_eq!(array_spec(&[0, 1, 2, 3]), "0-3");
    assert_eq!(array_spec(&[7, 0, 1, 2, 5, 8]), "0-2,5,7-8");
    assert_eq!(array_spec(&[4]), "4");
    assert_eq!(parse_array_indices("0-3"), vec![0, 1, 2, 3]);
    assert_eq!(parse_array_indices("[0,6,16-18]"), vec![0, 6, 16, 17, 18]);
    assert_eq!(parse_array_indices("0-15:4"), vec![0, 4, 8, 12]);
    assert_eq!(parse_array_indices("[2-4%2]"), vec![2, 3, 4]);
    assert_eq!(parse_array_indices("N/A"), Vec::<usize>::new());
    let any = [0, 2, 3, 4, 9, 11, 12];
    assert_eq!(parse_array_indices(&array_spec(&any)), any.to_vec());
}

#[test]
fn the_queue_parser_keeps_our_jobs_and_maps_states() {
    let text = "12|0|R\n12|1|CG\n12|[2-3]|PD\n12|4|PD\n99|0|R\n13|4|R\n";
    let q = parse_squeue(text, &["12".to_string(), "13".to_string()]);
    assert_eq!(q.get(&0), Some(&QueueState::Running));
    assert_eq!(q.get(&1), Some(&QueueState::Running));
    assert_eq!(q.get(&2), Some(&QueueState::Queued));
    assert_eq!(q.get(&3), Some(&QueueState::Queued));
    // Queued in job 12 but running in a later submission (13): running wins.
    assert_eq!(q.get(&4), Some(&QueueState::Running));
    assert_eq!(q.len(), 5, "job 99 is not ours");
}

#[test]
fn shell_words_survive_spaces_and_quotes() {
    assert_eq!(shell_word("/opt/bin/beamfloor"), "/opt/bin/beamfloor");
    assert_eq!(shell_word("/a b/c"), "'/a b/c'");
    assert_eq!(shell_word("it's"), "'it'\\''s'");
    assert_eq!(shell_word(""), "''");
}

fn prepared(dir: &Path) -> SweepFolder {
    let tiny = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/sweep_tiny.toml");
    SweepFolder::prepare(&tiny, dir).unwrap_or_else(|e| panic!("{e}"))
}

#[test]
fn the_batch_script_runs_the_task_index_as_the_point() {
    let tmp = tempfile::tempdir().unwrap();
    let folder = prepared(&tmp.path().join("my sweep"));
    let options = SlurmOptions {
        point_command: vec!["/opt/bf/beamfloor".into(), "sweep".into(), "run-point".into()],
        cpus_per_task: Some(2),
        time_limit: Some("00:10:00".into()),
        ..SlurmOptions::default()
    };
    let script = batch_script(&folder, &options);
    assert!(script.starts_with("#!/bin/bash\n"));
    assert!(script.contains("#SBATCH --cpus-per-task=2\n"));
    assert!(script.contains("#SBATCH --time=00:10:00\n"));
    assert!(script.contains("#SBATCH --job-name=beamfloor-sweep-tiny\n"));
    assert!(!script.contains("--partition"), "no partition unless asked");
    let dir = folder.dir.display().to_string();
    let last = script.lines().last().unwrap();
    assert_eq!(
        last,
        format!("exec /opt/bf/beamfloor sweep run-point '{dir}' \"$SLURM_ARRAY_TASK_ID\"")
    );
    assert!(script.contains(&format!("#SBATCH --output='{dir}/slurm/logs/point-%a.log'")));
    // bash itself accepts the script (syntax check only, nothing runs).
    let path = tmp.path().join("script.sh");
    std::fs::write(&path, &script).unwrap();
    let ok = std::process::Command::new("bash").arg("-n").arg(&path).status().unwrap();
    assert!(ok.success());
}
