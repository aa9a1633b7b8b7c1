//! Finding the parcels inside a kernel: one interface, two indexes.
//!
//! Coordinates are scaled by the kernel, (x/a, y/a, z/b), so the kernel's
//! support is the half-cylinder ρ < 1, 0 ≤ ±Δz < 1 whatever its aspect ratio.
//!
//! * The cell list uses unit cells and keeps a copy of the parcel data sorted
//!   by cell, so a query reads a few contiguous runs of memory.
//! * The k-d tree (kiddo) is rebuilt every step and queried for the ball of
//!   radius √2 around the point, which contains the cylinder.
//!
//! Both visit neighbours in an order fixed by the data alone (never by
//! threads), so sums over neighbours are bit-reproducible.

use kiddo::{ImmutableKdTree, SquaredEuclidean};

pub use crate::scenario::resolve::SearchSpec as SearchKind;

/// Parcel data the concentration estimate needs, in search order.
#[derive(Debug, Default, Clone)]
pub struct Points {
    /// Scaled positions (x/a, y/a, z/b).
    pub scaled: Vec<[f64; 3]>,
    pub class: Vec<u16>,
    pub volume: Vec<f64>,
}

#[derive(Debug, Default)]
struct CellGrid {
    lo: [f64; 3],
    n: [usize; 3],
    /// `start[c]..start[c + 1]` are the points of cell c (in `Points` order).
    start: Vec<u32>,
}

/// The neighbour index of one step.
pub struct NeighbourSearch {
    pub kind: SearchKind,
    /// Scale factors 1/a, 1/a, 1/b.
    inv_scale: [f64; 3],
    points: Points,
    grid: CellGrid,
    tree: Option<ImmutableKdTree<f64, 3>>,
    cell_of: Vec<u32>,
    order: Vec<u32>,
}

impl NeighbourSearch {
    pub fn new(kind: SearchKind, radius: f64, window_height: f64) -> Self {
        NeighbourSearch {
            kind,
            inv_scale: [1.0 / radius, 1.0 / radius, 1.0 / window_height],
            points: Points::default(),
            grid: CellGrid::default(),
            tree: None,
            cell_of: Vec::new(),
            order: Vec::new(),
        }
    }

    pub fn len(&self) -> usize {
        self.points.volume.len()
    }

    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Scale a position into kernel units.
    #[inline]
    pub fn scale(&self, p: [f64; 3]) -> [f64; 3] {
        [
            p[0] * self.inv_scale[0],
            p[1] * self.inv_scale[1],
            p[2] * self.inv_scale[2],
        ]
    }

    /// Rebuild from the current parcels.
    pub fn rebuild(&mut self, positions: &[[f64; 3]], class: &[u16], volume: &[f64]) {
        let n = positions.len();
        match self.kind {
            SearchKind::CellList => {
                let mut lo = [f64::INFINITY; 3];
                let mut hi = [f64::NEG_INFINITY; 3];
                for p in positions {
                    let s = self.scale(*p);
                    for d in 0..3 {
                        lo[d] = lo[d].min(s[d]);
                        hi[d] = hi[d].max(s[d]);
                    }
                }
                let mut dims = [1usize; 3];
                for d in 0..3 {
                    if n == 0 {
                        lo[d] = 0.0;
                        hi[d] = 0.0;
                    }
                    dims[d] = ((hi[d] - lo[d]).floor() as usize + 1).max(1);
                }
                let ncell = dims[0] * dims[1] * dims[2];
                let inv = self.inv_scale;
                self.cell_of.clear();
                self.cell_of.extend(positions.iter().map(|p| {
                    let c =
                        |d: usize| (((p[d] * inv[d]) - lo[d]).floor() as usize).min(dims[d] - 1);
                    ((c(2) * dims[1] + c(1)) * dims[0] + c(0)) as u32
                }));
                // Counting sort by cell, stable: ties keep parcel order.
                let mut start = vec![0u32; ncell + 1];
                for &c in &self.cell_of {
                    start[c as usize + 1] += 1;
                }
                for i in 0..ncell {
                    start[i + 1] += start[i];
                }
                let mut fill = start.clone();
                self.order.clear();
                self.order.resize(n, 0);
                for (i, &c) in self.cell_of.iter().enumerate() {
                    self.order[fill[c as usize] as usize] = i as u32;
                    fill[c as usize] += 1;
                }
                self.grid = CellGrid { lo, n: dims, start };
            }
            SearchKind::KdTree => {
                self.order.clear();
                self.order.extend(0..n as u32);
            }
        }
        let pts = &mut self.points;
        pts.scaled.clear();
        pts.class.clear();
        pts.volume.clear();
        for &i in &self.order {
            let i = i as usize;
            let p = positions[i];
            pts.scaled.push([
                p[0] * self.inv_scale[0],
                p[1] * self.inv_scale[1],
                p[2] * self.inv_scale[2],
            ]);
            pts.class.push(class[i]);
            pts.volume.push(volume[i]);
        }
        self.tree = match self.kind {
            SearchKind::KdTree if n > 0 => ImmutableKdTree::new_from_slice(&pts.scaled).ok(),
            _ => None,
        };
    }

    /// Call `visit(class, volume, sx, sy, sz)` for every parcel in the
    /// half-cylinder ahead of the scaled point `q` (below it, or above it when
    /// `up`): ρ < 1 and 0 ≤ ±Δz < 1, with the scaled offset of that parcel.
    #[inline]
    pub fn for_each_ahead(
        &self,
        q: [f64; 3],
        up: bool,
        mut visit: impl FnMut(u16, f64, f64, f64, f64),
    ) {
        let pts = &self.points;
        let mut consider = |j: usize| {
            let p = pts.scaled[j];
            let (sx, sy, sz) = (p[0] - q[0], p[1] - q[1], p[2] - q[2]);
            let ahead = if up { sz } else { -sz };
            if sx * sx + sy * sy < 1.0 && (0.0..1.0).contains(&ahead) {
                visit(pts.class[j], pts.volume[j], sx, sy, sz);
            }
        };
        match self.kind {
            SearchKind::CellList => {
                let g = &self.grid;
                if g.start.is_empty() {
                    return;
                }
                let c = |d: usize| ((q[d] - g.lo[d]).floor() as isize).clamp(-1, g.n[d] as isize);
                let (cx, cy, cz) = (c(0), c(1), c(2));
                let x0 = (cx - 1).max(0) as usize;
                let x1 = (cx + 1).min(g.n[0] as isize - 1);
                if x1 < x0 as isize {
                    return;
                }
                let x1 = x1 as usize;
                // Unit cells: a window one unit deep ahead spans this cell and the next.
                let (z0, z1) = if up { (cz, cz + 1) } else { (cz - 1, cz) };
                for z in z0.max(0)..=z1.min(g.n[2] as isize - 1) {
                    for y in (cy - 1).max(0)..=(cy + 1).min(g.n[1] as isize - 1) {
                        let row = (z as usize * g.n[1] + y as usize) * g.n[0];
                        // The three cells along x are contiguous in the sorted data.
                        let s = g.start[row + x0] as usize;
                        let e = g.start[row + x1 + 1] as usize;
                        for j in s..e {
                            consider(j);
                        }
                    }
                }
            }
            SearchKind::KdTree => {
                if let Some(tree) = &self.tree {
                    // The ball around the window's centre that holds the half-cylinder:
                    // radius² = 1 + (1/2)².
                    let centre = [q[0], q[1], q[2] + if up { 0.5 } else { -0.5 }];
                    tree.query(&centre)
                        .within::<SquaredEuclidean<f64>>(1.25)
                        .unsorted()
                        .visit(|item| consider(item.item as usize));
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::particles::random::uniform;

    #[test]
    fn both_indexes_find_exactly_the_brute_force_neighbours() {
        let n = 3000;
        let pos: Vec<[f64; 3]> = (0..n)
            .map(|i| {
                [
                    uniform(1, i, 0) * 0.1,
                    uniform(1, i, 1) * 0.1,
                    uniform(1, i, 2),
                ]
            })
            .collect();
        // Include duplicates on the floor, as a bed produces.
        let mut pos = pos;
        for p in pos.iter_mut().take(200) {
            p[2] = 0.0;
            p[0] = 0.05;
        }
        let class = vec![0u16; pos.len()];
        let vol: Vec<f64> = (0..pos.len()).map(|i| 1.0 + i as f64).collect();
        for kind in [SearchKind::CellList, SearchKind::KdTree] {
            let mut s = NeighbourSearch::new(kind, 0.02, 0.01);
            s.rebuild(&pos, &class, &vol);
            for qi in (0..pos.len()).step_by(37) {
                for up in [false, true] {
                    let q = s.scale(pos[qi]);
                    let mut found = Vec::new();
                    s.for_each_ahead(q, up, |_, v, _, _, _| found.push(v as u64));
                    found.sort();
                    let mut expect: Vec<u64> = (0..pos.len())
                        .filter(|&j| {
                            let d = [
                                pos[j][0] - pos[qi][0],
                                pos[j][1] - pos[qi][1],
                                pos[j][2] - pos[qi][2],
                            ];
                            let ahead = if up { d[2] / 0.01 } else { -d[2] / 0.01 };
                            (d[0] * d[0] + d[1] * d[1]) / 4e-4 < 1.0 && (0.0..1.0).contains(&ahead)
                        })
                        .map(|j| vol[j] as u64)
                        .collect();
                    expect.sort();
                    assert_eq!(found, expect, "{kind:?}, query {qi}, up {up}");
                }
            }
        }
    }
}
