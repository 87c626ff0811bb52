//! Connected tube regions: 26-connected labelling of the points above the threshold, slab by
//! slab, joined across slab boundaries and across periodic faces by union–find.
//!
//! Points get ids in global raster order (z slowest), independent of the slab size. Inside a
//! slab each point is joined with its 13 "backward" neighbours (the previous plane, the
//! previous row, the previous point); the previous slab's last plane is kept for the first
//! plane of the next slab, and the volume's first plane for the periodic z join at the end.
//! Union by smaller root makes every root the smallest id of its region, so the regions and
//! their numbering (by first point in raster order) do not depend on the slab size.
//!
//! # Reference
//! Union–find with path halving: R. E. Tarjan (1975), "Efficiency of a good but not linear set
//! union algorithm", *J. ACM* 22, 215–225 (common practice for connected-component labelling).

/// No point here.
pub(crate) const NONE: u32 = u32::MAX;

/// Disjoint sets over point ids; every root is the smallest id of its set.
#[derive(Debug, Default)]
pub(crate) struct UnionFind {
    parent: Vec<u32>,
}

impl UnionFind {
    /// A new singleton set; returns its id.
    pub fn push(&mut self) -> u32 {
        let id = self.parent.len() as u32;
        self.parent.push(id);
        id
    }

    /// Number of ids.
    #[cfg(test)]
    pub fn len(&self) -> usize {
        self.parent.len()
    }

    /// Root of `a` (path halving).
    pub fn find(&mut self, mut a: u32) -> u32 {
        while self.parent[a as usize] != a {
            let g = self.parent[self.parent[a as usize] as usize];
            self.parent[a as usize] = g;
            a = g;
        }
        a
    }

    /// Joins the sets of `a` and `b`; the smaller root wins.
    pub fn union(&mut self, a: u32, b: u32) {
        let (ra, rb) = (self.find(a), self.find(b));
        if ra != rb {
            let (lo, hi) = if ra < rb { (ra, rb) } else { (rb, ra) };
            self.parent[hi as usize] = lo;
        }
    }
}

/// Labelling state carried from slab to slab.
#[derive(Debug)]
pub(crate) struct Labeller {
    nx: usize,
    ny: usize,
    periodic: [bool; 3],
    /// The sets.
    pub uf: UnionFind,
    prev: Option<Vec<u32>>,
    first: Option<Vec<u32>>,
}

impl Labeller {
    pub fn new(nx: usize, ny: usize, periodic: [bool; 3]) -> Self {
        Self {
            nx,
            ny,
            periodic,
            uf: UnionFind::default(),
            prev: None,
            first: None,
        }
    }

    fn offset(&self, i: usize, d: isize, n: usize, periodic: bool) -> Option<usize> {
        let j = i as isize + d;
        if (0..n as isize).contains(&j) {
            Some(j as usize)
        } else if periodic && n > 1 {
            Some(j.rem_euclid(n as isize) as usize)
        } else {
            None
        }
    }

    /// Joins a point at `(y, x)` with the neighbours in `plane` at in-plane offsets `offs`.
    fn join_plane(&mut self, id: u32, y: usize, x: usize, plane: &[u32], offs: &[(isize, isize)]) {
        for &(dy, dx) in offs {
            let (Some(yy), Some(xx)) = (
                self.offset(y, dy, self.ny, self.periodic[1]),
                self.offset(x, dx, self.nx, self.periodic[0]),
            ) else {
                continue;
            };
            let other = plane[yy * self.nx + xx];
            if other != NONE && other != id {
                self.uf.union(id, other);
            }
        }
    }

    /// Adds the ids of the core planes of one slab (`planes` planes of `ny × nx`, [`NONE`]
    /// where no point), the first of which is global plane `z0`.
    pub fn add_slab(&mut self, ids: &[u32], planes: usize, z0: usize) {
        const SAME: [(isize, isize); 4] = [(0, -1), (-1, -1), (-1, 0), (-1, 1)];
        const ALL: [(isize, isize); 9] = [
            (-1, -1),
            (-1, 0),
            (-1, 1),
            (0, -1),
            (0, 0),
            (0, 1),
            (1, -1),
            (1, 0),
            (1, 1),
        ];
        let m = self.nx * self.ny;
        for p in 0..planes {
            let plane = &ids[p * m..(p + 1) * m];
            let below: Option<Vec<u32>> = if p > 0 {
                Some(ids[(p - 1) * m..p * m].to_vec())
            } else {
                self.prev.clone()
            };
            for y in 0..self.ny {
                for x in 0..self.nx {
                    let id = plane[y * self.nx + x];
                    if id == NONE {
                        continue;
                    }
                    self.join_plane(id, y, x, plane, &SAME);
                    if let Some(b) = &below {
                        self.join_plane(id, y, x, b, &ALL);
                    }
                }
            }
            if z0 + p == 0 {
                self.first = Some(plane.to_vec());
            }
        }
        if planes > 0 {
            self.prev = Some(ids[(planes - 1) * m..planes * m].to_vec());
        }
    }

    /// After the last slab: joins the last plane with the first across a periodic z face.
    pub fn finish(&mut self, nz: usize) {
        const ALL: [(isize, isize); 9] = [
            (-1, -1),
            (-1, 0),
            (-1, 1),
            (0, -1),
            (0, 0),
            (0, 1),
            (1, -1),
            (1, 0),
            (1, 1),
        ];
        if !self.periodic[2] || nz < 2 {
            return;
        }
        if let (Some(last), Some(first)) = (self.prev.take(), self.first.take()) {
            for y in 0..self.ny {
                for x in 0..self.nx {
                    let id = last[y * self.nx + x];
                    if id != NONE {
                        self.join_plane(id, y, x, &first, &ALL);
                    }
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Labels a dense 0/1 volume `[z][y][x]` slab by slab; returns the root of every point.
    fn label(mask: &[Vec<Vec<u8>>], slab: usize, periodic: [bool; 3]) -> Vec<u32> {
        let (nz, ny, nx) = (mask.len(), mask[0].len(), mask[0][0].len());
        let mut l = Labeller::new(nx, ny, periodic);
        let mut z0 = 0;
        while z0 < nz {
            let z1 = (z0 + slab).min(nz);
            let mut ids = vec![NONE; (z1 - z0) * ny * nx];
            for z in z0..z1 {
                for y in 0..ny {
                    for x in 0..nx {
                        if mask[z][y][x] == 1 {
                            ids[((z - z0) * ny + y) * nx + x] = l.uf.push();
                        }
                    }
                }
            }
            l.add_slab(&ids, z1 - z0, z0);
            z0 = z1;
        }
        l.finish(nz);
        (0..l.uf.len() as u32).map(|i| l.uf.find(i)).collect()
    }

    #[test]
    fn diagonal_chain_is_one_region_for_any_slab_size_and_periodic_faces_join() {
        // A diagonal line through z, y, x (26-connectivity joins corner neighbours) plus an
        // isolated point; and a pair touching only across the periodic x and z faces.
        let mut m = vec![vec![vec![0u8; 5]; 5]; 5];
        for i in 0..4 {
            m[i][i][i] = 1;
        }
        m[0][4][0] = 1;
        for slab in [1, 2, 5] {
            let r = label(&m, slab, [false; 3]);
            // ids in raster order: (0,0,0)=0, (0,4,0)=1, (1,1,1)=2, (2,2,2)=3, (3,3,3)=4.
            assert_eq!(r, vec![0, 1, 0, 0, 0], "slab {slab}");
        }
        let mut p = vec![vec![vec![0u8; 4]; 3]; 4];
        p[0][1][0] = 1;
        p[3][1][3] = 1;
        assert_eq!(label(&p, 2, [false; 3]), vec![0, 1]);
        assert_eq!(label(&p, 2, [true, false, false]), vec![0, 1]);
        assert_eq!(label(&p, 2, [true, false, true]), vec![0, 0]);
        assert_eq!(label(&p, 1, [true, false, true]), vec![0, 0]);
    }
}
