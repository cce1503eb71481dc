//! `inkling convert` and `inkling train` killed (SIGKILL) at random moments: the output path
//! then holds the old file byte for byte, or no file if there was none, or a whole new one;
//! never a partial file. A whole new image equals the output of an uninterrupted run; a whole
//! new checkpoint loads. (POSIX rename(2) replaces the target atomically, IEEE Std 1003.1;
//! writing a temporary file and renaming it over the output is what makes this hold.)

use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

use inkling_quantize::Checkpoint;
use inkling_tests::checkpoint_spec::{CheckpointSpec, Dtype};
use inkling_tests::inkling_cli::inkling_binary;
use inkling_tests::numpy_reference::make_checkpoint;
use inkling_tests::run_seed::{base_seed, SplitMix64};

/// Kills per command.
const KILLS: usize = 12;

fn spawn(args: &[&std::ffi::OsStr]) -> Child {
    Command::new(inkling_binary())
        .args(args)
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .expect("inkling starts")
}

/// Runs the command to the end and returns how long it took.
fn time_full_run(args: &[&std::ffi::OsStr]) -> Duration {
    let start = Instant::now();
    let status = spawn(args).wait().expect("inkling runs");
    assert!(status.success(), "uninterrupted run failed: {status}");
    start.elapsed()
}

/// Starts the command, kills it with SIGKILL after `delay` (if it is still running) and
/// reaps it; returns whether it had already finished.
fn kill_after(args: &[&std::ffi::OsStr], delay: Duration) -> bool {
    let mut child = spawn(args);
    std::thread::sleep(delay);
    let finished = child.try_wait().expect("try_wait").is_some();
    // `Child::kill` sends SIGKILL on Unix; a finished child is only reaped.
    let _ = child.kill();
    child.wait().expect("the killed process is reaped");
    finished
}

/// A delay uniform in `0..=limit`.
fn delay(rng: &mut SplitMix64, limit: Duration) -> Duration {
    let micros = limit.as_micros() as u64;
    Duration::from_micros(rng.next_u64() % (micros + 1))
}

/// Bytes of `path`, or `None` if there is no file.
fn read(path: &Path) -> Option<Vec<u8>> {
    match std::fs::read(path) {
        Ok(bytes) => Some(bytes),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => None,
        Err(e) => panic!("{}: {e}", path.display()),
    }
}

/// Hidden files in `dir`: the temporary files of writes that a kill cut short (allowed:
/// they never take the output's name; counted for the record).
fn leftovers(dir: &Path) -> usize {
    std::fs::read_dir(dir)
        .expect("the folder lists")
        .filter(|e| {
            e.as_ref()
                .is_ok_and(|e| e.file_name().to_string_lossy().starts_with('.'))
        })
        .count()
}

/// A safetensors container (8-byte little-endian header length, JSON header, data) whose
/// header parses and whose last tensor ends exactly at the end of the file: a file cut short
/// anywhere fails this.
fn is_whole_safetensors(bytes: &[u8]) -> bool {
    let Some((len, rest)) = bytes.split_first_chunk::<8>() else {
        return false;
    };
    let Some(header) = usize::try_from(u64::from_le_bytes(*len))
        .ok()
        .and_then(|n| rest.get(..n))
    else {
        return false;
    };
    let Ok(serde_json::Value::Object(map)) = serde_json::from_slice(header) else {
        return false;
    };
    let data_len = rest.len() - header.len();
    let end = map
        .iter()
        .filter(|(name, _)| *name != "__metadata__")
        .filter_map(|(_, t)| t["data_offsets"][1].as_u64())
        .max()
        .unwrap_or(0);
    end as usize == data_len
}

#[test]
fn convert_killed_leaves_the_old_image_or_the_whole_new_one() {
    let seed = base_seed();
    let mut rng = SplitMix64::new(seed);
    let dir = tempfile::tempdir().expect("a temporary folder");
    // Large enough (15 MB of f32) that reading, quantising and writing take a while.
    let big = dir.path().join("big.safetensors");
    let spec = CheckpointSpec {
        d: 384,
        i: 768,
        n: 16,
        k: 4,
        r: 24,
        blocks: 4,
        tied: false,
        dtype: Dtype::F32,
        seed,
    };
    make_checkpoint(&spec, &big);
    let out = dir.path().join("model.inkl");
    let args = [big.as_os_str(), "-o".as_ref(), out.as_os_str()];
    let args: Vec<&std::ffi::OsStr> = std::iter::once("convert".as_ref()).chain(args).collect();

    let full = time_full_run(&args);
    let new = read(&out).expect("the uninterrupted run wrote the image");
    let old = b"an older image that must survive".to_vec();
    let (mut kept_old, mut got_new, mut no_file) = (0, 0, 0);
    for kill in 0..KILLS {
        // Half the kills with an old file in place, half with none.
        let had_old = kill % 2 == 0;
        if had_old {
            std::fs::write(&out, &old).expect("old file written");
        } else {
            let _ = std::fs::remove_file(&out);
        }
        let wait = delay(&mut rng, full + full / 5);
        kill_after(&args, wait);
        match read(&out) {
            Some(b) if b == new => got_new += 1,
            Some(b) if had_old && b == old => kept_old += 1,
            None if !had_old => no_file += 1,
            Some(b) => panic!(
                "kill {kill} after {wait:?} (full run {full:?}): {} holds {} bytes, \
                 neither the old file nor the whole new image",
                out.display(),
                b.len()
            ),
            None => panic!("kill {kill} after {wait:?}: the old file is gone"),
        }
    }
    println!(
        "convert ({full:?} uninterrupted), {KILLS} kills: old kept {kept_old}, \
         no file {no_file}, whole new {got_new}; temporary files left behind: {}",
        leftovers(dir.path())
    );
}

#[test]
fn train_killed_leaves_whole_checkpoints() {
    let seed = base_seed();
    let mut rng = SplitMix64::new(seed ^ 1);
    let dir = tempfile::tempdir().expect("a temporary folder");
    let corpus = dir.path().join("corpus.txt");
    let words = [
        "alder", "brook", "cinder", "dune", "elm", "fjord", "glade", "heath",
    ];
    let text: Vec<u8> = (0..40_000)
        .flat_map(|_| {
            let w = words[(rng.next_u64() % words.len() as u64) as usize];
            w.bytes().chain(std::iter::once(b' '))
        })
        .collect();
    std::fs::write(&corpus, text).expect("corpus written");
    let out = dir.path().join("model.safetensors");
    let optimizer = PathBuf::from(format!("{}.adamw.safetensors", out.display()));
    // A checkpoint every step, so that most moments fall during or near a write.
    let args: Vec<&std::ffi::OsStr> = [
        "train".as_ref(),
        corpus.as_os_str(),
        "--out".as_ref(),
        out.as_os_str(),
        "--config".as_ref(),
        "tiny".as_ref(),
        "--steps".as_ref(),
        "30".as_ref(),
        "--checkpoint-every".as_ref(),
        "1".as_ref(),
        "--batch".as_ref(),
        "4".as_ref(),
        "--seq-len".as_ref(),
        "64".as_ref(),
        "--threads".as_ref(),
        "1".as_ref(),
    ]
    .to_vec();
    let full = time_full_run(&args);
    let old = b"an older checkpoint that must survive".to_vec();
    let mut outcomes = [0usize; 3];
    for kill in 0..KILLS {
        let had_old = kill % 2 == 0;
        for p in [&out, &optimizer] {
            if had_old {
                std::fs::write(p, &old).expect("old file written");
            } else {
                let _ = std::fs::remove_file(p);
            }
        }
        // Half the kills early, before or during the first writes.
        let limit = if kill % 4 < 2 { full / 50 } else { full };
        let wait = delay(&mut rng, limit);
        kill_after(&args, wait);
        for p in [&out, &optimizer] {
            let outcome = match read(p) {
                Some(b) if had_old && b == old => 0,
                None if !had_old => 1,
                Some(b) if is_whole_safetensors(&b) => 2,
                Some(b) => panic!(
                    "kill {kill} after {wait:?}: {} holds {} bytes that are neither the old \
                     file nor a whole safetensors file",
                    p.display(),
                    b.len()
                ),
                None => panic!(
                    "kill {kill} after {wait:?}: the old {} is gone",
                    p.display()
                ),
            };
            outcomes[outcome] += 1;
            if p == &out && outcome == 2 {
                let bytes = read(p).unwrap_or_default();
                if let Err(e) =
                    Checkpoint::from_bytes(&bytes, p, &inkling_quantize::ReadOptions::default())
                {
                    panic!("kill {kill} after {wait:?}: the new checkpoint does not load: {e}");
                }
            }
        }
    }
    println!(
        "train ({full:?} uninterrupted), {KILLS} kills, checkpoint and optimizer files: \
         old kept {}, no file {}, whole new {}; temporary files left behind: {}",
        outcomes[0],
        outcomes[1],
        outcomes[2],
        leftovers(dir.path())
    );
}
