//! Ice topologies of the step albedo: which surface types the regions
//! between the ice edges have, from the domain's low end to the north pole.

/// The surface type of a region.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Surface {
    /// Open surface (ocean or land).
    Open,
    /// Ice.
    Ice,
}

/// An ice topology: the surface types of the regions from the domain's low
/// end (the equator on a symmetric grid, the south pole on a full one) to
/// the north pole, alternating.
#[derive(Clone, Debug, PartialEq, Eq, Hash)]
pub struct Topology {
    /// Regions, low end first.
    pub regions: Vec<Surface>,
}

impl Topology {
    /// Every topology with at most `max_edges` edges.
    pub fn all(max_edges: usize) -> Vec<Topology> {
        let mut out = Vec::new();
        for k in 0..=max_edges {
            for first in [Surface::Open, Surface::Ice] {
                let regions = (0..=k)
                    .map(|r| if r % 2 == 0 { first } else { other(first) })
                    .collect();
                out.push(Topology { regions });
            }
        }
        out
    }

    /// The topology of ascending ice intervals on [x0, 1].
    pub fn of_intervals(intervals: &[(f64, f64)], x0: f64) -> (Topology, Vec<f64>) {
        let tiny = 1e-12;
        let mut regions = Vec::new();
        let mut edges = Vec::new();
        let mut at = x0;
        for &(a, b) in intervals {
            if a > at + tiny {
                regions.push(Surface::Open);
                edges.push(a);
            }
            regions.push(Surface::Ice);
            if b < 1.0 - tiny {
                edges.push(b);
            }
            at = b;
        }
        if regions.is_empty() || at < 1.0 - tiny {
            regions.push(Surface::Open);
        }
        (Topology { regions }, edges)
    }

    /// Number of edges.
    pub fn edges(&self) -> usize {
        self.regions.len().saturating_sub(1)
    }

    /// A short name, e.g. `open|ice` (low end first).
    pub fn name(&self) -> String {
        self.regions
            .iter()
            .map(|s| match s {
                Surface::Open => "open",
                Surface::Ice => "ice",
            })
            .collect::<Vec<_>>()
            .join("|")
    }
}

fn other(s: Surface) -> Surface {
    match s {
        Surface::Open => Surface::Ice,
        Surface::Ice => Surface::Open,
    }
}
