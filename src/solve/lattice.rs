//! A symmetric nine-point operator on a rectangular lattice, and how the
//! unknowns of a sparse system sit on it: the structure a geometric
//! multigrid needs ([`super::lines`]).
//!
//! The lattice has `nx × ny` points numbered row by row (point
//! `k = i + nx·j`); the solver knows nothing of positions. Each point
//! couples to at most its eight neighbours. Only the couplings towards
//! (i−1, j), (i, j−1), (i−1, j−1) and (i+1, j−1) are stored; the other four
//! are the stored couplings of the neighbours (symmetry), so the operator
//! is symmetric by construction.
//!
//! The diagonal is not stored: each point carries its row sum instead (its
//! *excess*: the conductance to fixed values, exactly zero inside the
//! domain), and the diagonal is the excess minus the couplings. A diagonal
//! stored as a number would carry the rounding of the sum it came from,
//! and multigrid coarsening amplifies such row-sum noise level by level.

/// A symmetric nine-point operator (matrix entries: couplings usually
/// negative, the diagonal their negated sum plus the excess).
#[derive(Debug, Clone, PartialEq)]
pub struct Lattice {
    /// Points along x.
    pub nx: usize,
    /// Points along y.
    pub ny: usize,
    /// Row sum of each point (diagonal plus couplings): the conductance to
    /// fixed values; 1 for a fixed point, whose row is the identity.
    pub excess: Vec<f64>,
    /// Entry coupling (i, j) to (i−1, j).
    pub w: Vec<f64>,
    /// Entry coupling (i, j) to (i, j−1).
    pub s: Vec<f64>,
    /// Entry coupling (i, j) to (i−1, j−1).
    pub sw: Vec<f64>,
    /// Entry coupling (i, j) to (i+1, j−1).
    pub se: Vec<f64>,
}

impl Lattice {
    /// The zero operator on `nx × ny` points.
    pub fn zeros(nx: usize, ny: usize) -> Lattice {
        let z = vec![0.0; nx * ny];
        Lattice { nx, ny, excess: z.clone(), w: z.clone(), s: z.clone(), sw: z.clone(), se: z }
    }

    /// Number of points.
    pub fn points(&self) -> usize {
        self.nx * self.ny
    }

    /// Point (i, j).
    #[inline]
    pub fn point(&self, i: usize, j: usize) -> usize {
        i + self.nx * j
    }

    /// The whole stencil of point (i, j): `m[dj + 1][di + 1]` couples it to
    /// (i + di, j + dj), zero outside the lattice; the diagonal `m[1][1]` is
    /// the excess minus the couplings.
    pub fn stencil(&self, i: usize, j: usize) -> [[f64; 3]; 3] {
        let mut m = self.couplings(i, j);
        m[1][1] = self.excess[self.point(i, j)] - m.iter().flatten().sum::<f64>();
        m
    }

    /// The couplings of point (i, j) as in [`Lattice::stencil`], with a
    /// zero diagonal.
    pub fn couplings(&self, i: usize, j: usize) -> [[f64; 3]; 3] {
        let (nx, ny) = (self.nx, self.ny);
        let p = self.point(i, j);
        let mut m = [[0.0; 3]; 3];
        m[1][0] = self.w[p];
        m[0][1] = self.s[p];
        m[0][0] = self.sw[p];
        m[0][2] = self.se[p];
        if i + 1 < nx {
            m[1][2] = self.w[p + 1];
        }
        if j + 1 < ny {
            let q = p + nx;
            m[2][1] = self.s[q];
            if i > 0 {
                m[2][0] = self.se[q - 1];
            }
            if i + 1 < nx {
                m[2][2] = self.sw[q + 1];
            }
        }
        m
    }

    /// y = L·x over all points.
    pub fn apply(&self, x: &[f64], y: &mut [f64]) {
        for j in 0..self.ny {
            for i in 0..self.nx {
                let m = self.stencil(i, j);
                let mut acc = 0.0;
                for (dj, row) in m.iter().enumerate() {
                    for (di, v) in row.iter().enumerate() {
                        if *v != 0.0 {
                            acc += v * x[self.point(i + di - 1, j + dj - 1)];
                        }
                    }
                }
                y[self.point(i, j)] = acc;
            }
        }
    }
}

/// How the unknowns of a system sit on a lattice. The first
/// `points.len()` unknowns are one point each; each later unknown is a
/// group of points that share one value (a floating electrode). Points
/// that belong to no unknown have fixed values: in the lattice operator
/// they are decoupled rows with diagonal 1.
///
/// With E the map from unknowns to points (a group's value copied to each
/// of its points) the system's matrix is A = Eᵀ·L·E: couplings between
/// points of one group cancel, so the lattice operator may tie them with
/// any conductance (a stiff one makes it a good model of the group).
#[derive(Debug, Clone, PartialEq)]
pub struct Embedding {
    /// The point of each single-point unknown, in unknown order.
    pub points: Vec<u32>,
    /// The points of each group unknown (unknowns after the single ones).
    pub groups: Vec<Vec<u32>>,
}

impl Embedding {
    /// Number of unknowns.
    pub fn unknowns(&self) -> usize {
        self.points.len() + self.groups.len()
    }

    /// True for each lattice point that belongs to no unknown (fixed).
    pub fn fixed(&self, points: usize) -> Vec<bool> {
        let mut fixed = vec![true; points];
        for &p in self.points.iter().chain(self.groups.iter().flatten()) {
            fixed[p as usize] = false;
        }
        fixed
    }
}

/// A lattice operator with the embedding of a system's unknowns.
#[derive(Debug, Clone, PartialEq)]
pub struct Structure {
    /// The operator.
    pub lattice: Lattice,
    /// Where the unknowns are.
    pub embedding: Embedding,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_stencil_reads_the_neighbours_couplings_symmetrically() {
        let mut l = Lattice::zeros(3, 3);
        let p = l.point(1, 1);
        l.excess[p] = -6.0;
        l.w[p + 1] = -2.0; // (2,1) to (1,1): east of (1,1)
        l.s[p + 3] = -3.0; // (1,2) to (1,1): north
        l.se[p + 3 - 1] = -4.0; // (0,2) to (1,1): north-west
        l.sw[p + 3 + 1] = -5.0; // (2,2) to (1,1): north-east
        let m = l.stencil(1, 1);
        assert_eq!(m[1][2], -2.0);
        assert_eq!(m[2][1], -3.0);
        assert_eq!(m[2][0], -4.0);
        assert_eq!(m[2][2], -5.0);
        // the diagonal: excess − couplings = −6 + 14
        assert_eq!(m[1][1], 8.0);
    }
}
