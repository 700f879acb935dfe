//! Runs the `hedgerow` binary on files written into a fresh scratch folder.

use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::atomic::{AtomicUsize, Ordering};

pub struct Scratch {
    pub dir: PathBuf,
}

impl Scratch {
    pub fn new(name: &str) -> Self {
        static N: AtomicUsize = AtomicUsize::new(0);
        let dir = std::env::temp_dir().join(format!(
            "hedgerow-cli-{}-{}-{name}",
            std::process::id(),
            N.fetch_add(1, Ordering::Relaxed)
        ));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).expect("scratch dir");
        Scratch { dir }
    }
    pub fn write(&self, name: &str, bytes: &[u8]) -> PathBuf {
        let p = self.dir.join(name);
        std::fs::write(&p, bytes).expect("write fixture");
        p
    }
}

impl Scratch {
    /// The 7-node tree the numpy fixtures were written for, as `t.csv`, and the named files of
    /// `tests/fixtures/numpy/` (written by numpy itself) beside it.
    pub fn numpy_fixtures(&self, files: &[&str]) {
        let fixtures = concat!(env!("CARGO_MANIFEST_DIR"), "/../../tests/fixtures/numpy/");
        self.write(
            "t.csv",
            b"id,parent,name\nb,a,B\na,,A\nc,a,C\nd,,D\ne,d,E\nf,b,F\ng,b,G\n",
        );
        for f in files {
            self.write(
                f,
                &std::fs::read(format!("{fixtures}{f}")).expect("fixture"),
            );
        }
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.dir);
    }
}

pub struct Run {
    pub code: i32,
    pub stdout: String,
    pub stderr: String,
}

pub fn hedgerow(dir: &Path, args: &[&str]) -> Run {
    let out = Command::new(env!("CARGO_BIN_EXE_hedgerow"))
        .current_dir(dir)
        .args(args)
        .output()
        .expect("run hedgerow");
    Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into(),
        stderr: String::from_utf8_lossy(&out.stderr).into(),
    }
}

/// A `.npy` header as numpy writes it, for a shape written like Python's tuple repr.
pub fn npy_header(descr: &str, shape: &str) -> Vec<u8> {
    let dims: Vec<u64> = shape
        .trim_matches(|c| c == '(' || c == ')')
        .split(',')
        .filter(|d| !d.trim().is_empty())
        .map(|d| d.trim().parse().expect("shape"))
        .collect();
    hedgerow_core::npy::header_bytes(descr, &dims, false)
}

pub fn npy_f32(shape: &str, values: &[f32]) -> Vec<u8> {
    let mut out = npy_header("<f4", shape);
    for v in values {
        out.extend(v.to_le_bytes());
    }
    out
}

/// A small valid batch: 3 nodes (x with children y, z), 4 rows.
pub const TAXONOMY: &str = "id,parent\nx,\ny,x\nz,x\n";
pub const LABELS: &str = "label\ny\nz\n\nx\n";

pub fn logits(rows: usize) -> Vec<u8> {
    let values: Vec<f32> = (0..rows * 3).map(|i| ((i * 7) % 5) as f32 - 2.0).collect();
    npy_f32(&format!("({rows}, 3)"), &values)
}

pub fn objectness(values: &[f32]) -> Vec<u8> {
    npy_f32(&format!("({},)", values.len()), values)
}

/// The four input flags over the files the tests write (`t.csv`, `l.npy`, `y.csv`, `o.npy`).
pub const INPUT: [&str; 8] = [
    "--taxonomy",
    "t.csv",
    "--logits",
    "l.npy",
    "--labels",
    "y.csv",
    "--objectness",
    "o.npy",
];

/// The most memory a run held: peak resident set (`VmHWM`) and peak address space (`VmPeak`),
/// in KiB, read from `/proc/<pid>/status` every millisecond until the process ends.
#[derive(Debug, Clone, Copy, Default)]
pub struct Peak {
    pub rss_kib: u64,
    pub vm_kib: u64,
}

/// [`hedgerow`], measuring the peak memory of the run.
pub fn hedgerow_peak(dir: &Path, args: &[&str]) -> (Run, Peak) {
    use std::io::Read;
    use std::process::Stdio;
    let mut child = Command::new(env!("CARGO_BIN_EXE_hedgerow"))
        .current_dir(dir)
        .args(args)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("run hedgerow");
    // Drain both pipes while the process runs, so it never blocks on a full one.
    let drain = |pipe: Option<Box<dyn Read + Send>>| {
        std::thread::spawn(move || {
            let mut out = Vec::new();
            if let Some(mut p) = pipe {
                let _ = p.read_to_end(&mut out);
            }
            String::from_utf8_lossy(&out).into_owned()
        })
    };
    let stdout = drain(
        child
            .stdout
            .take()
            .map(|p| Box::new(p) as Box<dyn Read + Send>),
    );
    let stderr = drain(
        child
            .stderr
            .take()
            .map(|p| Box::new(p) as Box<dyn Read + Send>),
    );
    let status_file = format!("/proc/{}/status", child.id());
    let mut peak = Peak::default();
    let status = loop {
        if let Ok(text) = std::fs::read_to_string(&status_file) {
            let field = |name: &str| {
                text.lines()
                    .find_map(|l| l.strip_prefix(name))
                    .and_then(|v| v.trim().trim_end_matches("kB").trim().parse::<u64>().ok())
            };
            if let Some(v) = field("VmHWM:") {
                peak.rss_kib = peak.rss_kib.max(v);
            }
            if let Some(v) = field("VmPeak:") {
                peak.vm_kib = peak.vm_kib.max(v);
            }
        }
        match child.try_wait().expect("wait for hedgerow") {
            Some(status) => break status,
            None => std::thread::sleep(std::time::Duration::from_millis(1)),
        }
    };
    let run = Run {
        code: status.code().unwrap_or(-1),
        stdout: stdout.join().expect("stdout"),
        stderr: stderr.join().expect("stderr"),
    };
    (run, peak)
}
