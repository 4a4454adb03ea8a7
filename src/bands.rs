//! Speed bands: contiguous runs of airspeeds that share a condition (unsafe, stalled), each
//! with the distinct reasons over the run. Used by the sweep and by the flight summary.

use serde::Serialize;

/// A contiguous band of speeds sharing a condition.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Band {
    /// First speed (m/s).
    pub from_mps: f64,
    /// Last speed (m/s).
    pub to_mps: f64,
    /// Distinct reasons over the band.
    pub reasons: Vec<String>,
}

/// Group consecutive flagged points into bands; each band lists the distinct kinds.
pub fn bands_of(speeds: &[f64], flags: &[Vec<String>]) -> Vec<Band> {
    let mut out: Vec<Band> = Vec::new();
    let mut open = false;
    for (i, f) in flags.iter().enumerate() {
        if f.is_empty() {
            open = false;
            continue;
        }
        if !open {
            out.push(Band {
                from_mps: speeds[i],
                to_mps: speeds[i],
                reasons: Vec::new(),
            });
            open = true;
        }
        let b = out.last_mut().expect("a band is open");
        b.to_mps = speeds[i];
        for k in f {
            if !b.reasons.contains(k) {
                b.reasons.push(k.clone());
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bands_merge_neighbours_and_keep_distinct_reasons() {
        let s = [0.0, 1.0, 2.0, 3.0, 4.0];
        let f = vec![
            vec!["a".to_string()],
            vec!["a".to_string(), "b".to_string()],
            vec![],
            vec!["c".to_string()],
            vec![],
        ];
        let b = bands_of(&s, &f);
        assert_eq!(b.len(), 2);
        assert_eq!((b[0].from_mps, b[0].to_mps), (0.0, 1.0));
        assert_eq!(b[0].reasons, vec!["a", "b"]);
        assert_eq!((b[1].from_mps, b[1].to_mps), (3.0, 3.0));
    }
}
