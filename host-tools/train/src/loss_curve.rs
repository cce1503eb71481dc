//! The loss curve: per-step training loss and periodic held-out bits per byte,
//! kept as CSV (`<out>.loss.csv`) and drawn as a small hand-written SVG (`<out>.loss.svg`).

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use crate::checkpoint_file::write_atomically;
use crate::error::TrainError;

#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CurvePoint {
    pub step: u64,
    pub train_nats: f64,
    pub heldout_bpb: Option<f64>,
}

const HEADER: &str = "step,train_loss_nats,train_bits_per_byte,heldout_bits_per_byte";

pub fn with_suffix(out: &Path, suffix: &str) -> PathBuf {
    let mut s = out.as_os_str().to_owned();
    s.push(suffix);
    PathBuf::from(s)
}

pub fn write_csv(path: &Path, points: &[CurvePoint]) -> Result<(), TrainError> {
    let mut s = String::from(HEADER);
    s.push('\n');
    for p in points {
        let held = p.heldout_bpb.map(|v| format!("{v:.5}")).unwrap_or_default();
        let _ = writeln!(
            s,
            "{},{:.5},{:.5},{held}",
            p.step,
            p.train_nats,
            p.train_nats / std::f64::consts::LN_2
        );
    }
    write_atomically(path, s.as_bytes())
}

/// Reads a curve written by `write_csv`, keeping the points up to `last_step`
/// (a resumed run continues the curve of its checkpoint). A missing file is an empty curve.
pub fn read_csv(path: &Path, last_step: u64) -> Result<Vec<CurvePoint>, TrainError> {
    let text = match std::fs::read_to_string(path) {
        Ok(t) => t,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(Vec::new()),
        Err(source) => {
            return Err(TrainError::ReadFile {
                path: path.to_owned(),
                source,
            })
        }
    };
    let points = text
        .lines()
        .skip(1)
        .filter_map(|line| {
            let mut f = line.split(',');
            let step = f.next()?.parse().ok()?;
            let train_nats = f.next()?.parse().ok()?;
            let heldout_bpb = f.nth(1).and_then(|v| v.parse().ok());
            Some(CurvePoint {
                step,
                train_nats,
                heldout_bpb,
            })
        })
        .filter(|p| p.step <= last_step)
        .collect();
    Ok(points)
}

/// Both curves in bits per byte against step.
pub fn write_svg(path: &Path, points: &[CurvePoint]) -> Result<(), TrainError> {
    let (w, h, left, right, top, bottom) = (720.0, 400.0, 60.0, 20.0, 30.0, 45.0);
    let bpb = |p: &CurvePoint| p.train_nats / std::f64::consts::LN_2;
    let max_step = points.iter().map(|p| p.step).max().unwrap_or(1).max(1) as f64;
    let max_y = points
        .iter()
        .flat_map(|p| [Some(bpb(p)), p.heldout_bpb])
        .flatten()
        .filter(|v| v.is_finite())
        .fold(1.0f64, f64::max)
        .ceil();
    let x = |step: f64| left + (w - left - right) * step / max_step;
    let y = |v: f64| top + (h - top - bottom) * (1.0 - v.clamp(0.0, max_y) / max_y);
    let mut s = String::new();
    let _ = writeln!(
        s,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{w}" height="{h}" font-family="sans-serif" font-size="12">"#
    );
    let _ = writeln!(s, r#"<rect width="{w}" height="{h}" fill="white"/>"#);
    for k in 0..=5 {
        let v = max_y * k as f64 / 5.0;
        let st = max_step * k as f64 / 5.0;
        let (x2, yv, xt) = (w - right, y(v), left - 6.0);
        let _ = writeln!(
            s,
            r##"<line x1="{left}" x2="{x2}" y1="{yv:.1}" y2="{yv:.1}" stroke="#ddd"/><text x="{xt}" y="{:.1}" text-anchor="end">{v:.1}</text>"##,
            yv + 4.0
        );
        let _ = writeln!(
            s,
            r#"<text x="{:.1}" y="{}" text-anchor="middle">{st:.0}</text>"#,
            x(st),
            h - bottom + 16.0
        );
    }
    let _ = writeln!(
        s,
        r#"<text x="{}" y="{}" text-anchor="middle">step</text>"#,
        (left + w - right) / 2.0,
        h - 8.0
    );
    let _ = writeln!(
        s,
        r#"<text x="14" y="{}" transform="rotate(-90 14 {0})" text-anchor="middle">bits per byte</text>"#,
        (top + h - bottom) / 2.0
    );
    let line = |s: &mut String, pts: Vec<(f64, f64)>, color: &str| {
        let coords: Vec<String> = pts
            .iter()
            .map(|&(a, b)| format!("{:.1},{:.1}", x(a), y(b)))
            .collect();
        let _ = writeln!(
            s,
            r#"<polyline fill="none" stroke="{color}" stroke-width="1.5" points="{}"/>"#,
            coords.join(" ")
        );
    };
    // At most ~1000 vertices: consecutive steps averaged (a long run stays a small file).
    let per = points.len().div_ceil(1000).max(1);
    let train: Vec<(f64, f64)> = points
        .chunks(per)
        .map(|c| {
            let n = c.len() as f64;
            (
                c.iter().map(|p| p.step as f64).sum::<f64>() / n,
                c.iter().map(bpb).sum::<f64>() / n,
            )
        })
        .collect();
    line(&mut s, train, "#1f77b4");
    line(
        &mut s,
        points
            .iter()
            .filter_map(|p| Some((p.step as f64, p.heldout_bpb?)))
            .collect(),
        "#d62728",
    );
    let _ = writeln!(
        s,
        r##"<text x="{}" y="20" fill="#1f77b4">training loss</text><text x="{}" y="20" fill="#d62728">held-out</text>"##,
        left + 10.0,
        left + 120.0
    );
    s.push_str("</svg>\n");
    write_atomically(path, s.as_bytes())
}
