//! The legend under a plot (entries with a line, fill or bracket sample, flowed into lines
//! and broken at spaces when too long) and the tags in the strip above a panel (one row,
//! spread apart where markers crowd, with leaders down to the markers).

use super::page::{fit, line_h};
use crate::draw::svg::text_width;

/// What a legend entry shows before its text.
#[derive(Debug, Clone, Copy)]
pub(super) enum Sample {
    Line {
        colour: &'static str,
        width: f64,
        dash: &'static str,
    },
    Fill {
        colour: &'static str,
        edge: &'static str,
    },
    /// A short bar with end ticks (an interval).
    Bracket,
    None,
}

/// A name in the strip above a panel: for a marker line at pixel `x` (with a leader down to
/// it), or a note that wants its centre at `x` (no leader).
#[derive(Debug, Clone)]
pub(super) struct Tag {
    pub x: f64,
    pub text: String,
    pub leader: bool,
    /// A note for the left (−1) or right (+1) edge, kept outside the markers' tags; 0 for a
    /// marker.
    pub edge: i8,
}

/// Room under the tags for their leaders, px.
pub(super) const LEAD: f64 = 8.0;

/// Legend entries flowed into lines.
#[derive(Debug, Clone, Default)]
pub(super) struct Legend {
    /// Each line: entries as (x, sample, text).
    pub lines: Vec<Vec<(f64, Sample, String)>>,
}

/// Room for a legend entry's sample before its text, px.
pub(super) const SAMPLE_W: f64 = 22.0;

impl Legend {
    /// Flows `items` into lines between `left` and `right`; an entry wider than a line is
    /// broken at spaces onto lines of its own.
    pub fn flow(items: &[(Sample, String)], left: f64, right: f64, fs: f64) -> Legend {
        let avail = (right - left).max(4.0 * fs);
        let mut lines: Vec<Vec<(f64, Sample, String)>> = vec![Vec::new()];
        let mut x = left;
        for (sample, text) in items {
            // Every text starts past the sample's room, with or without a sample.
            let lead = SAMPLE_W + 6.0;
            let w = lead + text_width(text, fs);
            if x > left && x + w > left + avail {
                lines.push(Vec::new());
                x = left;
            }
            if w <= avail {
                if let Some(line) = lines.last_mut() {
                    line.push((x, *sample, text.clone()));
                }
                x += w + 1.5 * fs;
                continue;
            }
            // Too wide for one line: break at spaces.
            let mut first = true;
            let mut current = String::new();
            let push = |lines: &mut Vec<Vec<(f64, Sample, String)>>, first: bool, s: &str| {
                if let Some(line) = lines.last_mut() {
                    let smp = if first { *sample } else { Sample::None };
                    line.push((left, smp, s.to_string()));
                }
            };
            for word in words(text) {
                let trial = if current.is_empty() { word.clone() } else { format!("{current} {word}") };
                if !current.is_empty() && lead + text_width(&trial, fs) > avail {
                    push(&mut lines, first, &fit(&current, avail - lead, fs));
                    lines.push(Vec::new());
                    first = false;
                    current = word;
                } else {
                    current = trial;
                }
            }
            push(&mut lines, first, &fit(&current, avail - lead, fs));
            lines.push(Vec::new());
            x = left;
        }
        lines.retain(|l| !l.is_empty());
        Legend { lines }
    }

    pub fn height(&self, fs: f64) -> f64 {
        self.lines.len() as f64 * line_h(fs)
    }
}

/// The words of `text` for line breaking, a number kept with the unit after it ("806 µV").
fn words(text: &str) -> Vec<String> {
    let mut out: Vec<String> = Vec::new();
    for w in text.split(' ') {
        let numeric = out.last().is_some_and(|p| {
            let last = p.rsplit(' ').next().unwrap_or("");
            last.trim_start_matches(['(', '-', '−', '≈']).parse::<f64>().is_ok()
        });
        match out.last_mut() {
            Some(p) if numeric && w.chars().next().is_some_and(|c| c.is_alphabetic() || c == '%' || c == '°') => {
                p.push(' ');
                p.push_str(w);
            }
            _ => out.push(w.to_string()),
        }
    }
    out
}

/// Centres for the tags in one row between `lo` and `hi`: each as near its `x` as the
/// others allow, keeping `fs/2` apart (clusters of crowding tags are centred on their
/// markers as a group). Tags that cannot fit are left out (`None`), from the last one back.
pub(super) fn spread(tags: &[Tag], lo: f64, hi: f64, fs: f64) -> Vec<Option<f64>> {
    let gap = 0.6 * fs;
    let w: Vec<f64> = tags.iter().map(|t| text_width(&t.text, fs)).collect();
    let mut keep: Vec<usize> = (0..tags.len()).filter(|&i| tags[i].x.is_finite()).collect();
    while !keep.is_empty() && keep.iter().map(|&i| w[i] + gap).sum::<f64>() - gap > hi - lo {
        keep.pop();
    }
    crate::order::sort_by(&mut keep, |&a, &b| tags[a].edge.cmp(&tags[b].edge).then(tags[a].x.total_cmp(&tags[b].x)));
    // Clusters: members, left edge, width.
    let mut clusters: Vec<(Vec<usize>, f64, f64)> = Vec::new();
    let place = |members: &[usize], width: f64| -> f64 {
        // Mean over members of the left edge each would like the cluster to have.
        let mut offset = 0.0;
        let mut sum = 0.0;
        for &m in members {
            sum += tags[m].x - offset - w[m] / 2.0;
            offset += w[m] + gap;
        }
        (sum / members.len() as f64).clamp(lo, (hi - width).max(lo))
    };
    for i in keep {
        let left = place(&[i], w[i]);
        clusters.push((vec![i], left, w[i]));
        while clusters.len() >= 2 {
            let n = clusters.len();
            let (a, b) = (&clusters[n - 2], &clusters[n - 1]);
            if a.1 + a.2 + gap <= b.1 + 1e-9 {
                break;
            }
            let mut members = a.0.clone();
            members.extend(b.0.iter().copied());
            let width = a.2 + gap + b.2;
            let left = place(&members, width);
            clusters.truncate(n - 2);
            clusters.push((members, left, width));
        }
    }
    let mut out = vec![None; tags.len()];
    for (members, left, _) in clusters {
        let mut x = left;
        for m in members {
            out[m] = Some(x + w[m] / 2.0);
            x += w[m] + gap;
        }
    }
    out
}
