//! VTK export of the potential and field on the grid, for general-purpose
//! visualisation programs: the legacy ASCII format, dataset
//! RECTILINEAR_GRID (Kitware, "VTK File Formats", VTK User's Guide,
//! 11th ed. 2010). Coordinates in mm, potential in kV, field in kV/mm
//! (in axisymmetric cases x is r and y is z).
//!
//! Written here rather than with a VTK crate: the format is a dozen lines
//! of header and plain number columns, and the one Rust crate for it has
//! had no stable release for years.

use crate::case::Case;
use crate::fields::{Inside, Sampler};
use crate::grid::{CONDUCTOR, Grid, Layout};
use crate::units::{to_kv, to_kv_per_mm, to_mm};
use std::fmt::Write;

/// Node values and per-cell part indices as a legacy VTK file.
///
/// Point data: `potential_kv`, `e_kv_per_mm` (vector, z = 0),
/// `e_magnitude_kv_per_mm`; the field at a node is taken from the cell
/// above and to the right of it (the last row and column from the cell
/// before). Cell data: `part_number` (the number of the part in the
/// report's parts table and on the map, from 1; 0 inside electrodes).
pub fn vtk(case: &Case, grid: &Grid, layout: &Layout, phi: &[f64]) -> String {
    let sampler = Sampler::new(case, grid, layout, phi);
    let (nx, ny) = (grid.nx(), grid.ny());
    let mut o = String::with_capacity(grid.nodes() * 80);
    let _ = writeln!(o, "# vtk DataFile Version 3.0");
    let title: String = format!("hvstack {}: {}", env!("CARGO_PKG_VERSION"), case.title)
        .chars()
        .map(|c| if c.is_control() { ' ' } else { c })
        .take(250)
        .collect();
    let _ = writeln!(o, "{title}");
    let _ = writeln!(o, "ASCII\nDATASET RECTILINEAR_GRID\nDIMENSIONS {nx} {ny} 1");
    let coords = |o: &mut String, name: &str, v: &[f64]| {
        let _ = writeln!(o, "{name} {} double", v.len());
        let line: Vec<String> = v.iter().map(|x| format!("{:e}", to_mm(*x))).collect();
        let _ = writeln!(o, "{}", line.join(" "));
    };
    coords(&mut o, "X_COORDINATES", &grid.x);
    coords(&mut o, "Y_COORDINATES", &grid.y);
    let _ = writeln!(o, "Z_COORDINATES 1 double\n0");

    let mut e = Vec::with_capacity(grid.nodes());
    for j in 0..ny {
        for i in 0..nx {
            // Nudge into the cell up and to the right (or the one before at the far edges).
            let x = if i + 1 < nx { grid.x[i] + 1e-9 * (grid.x[i + 1] - grid.x[i]) } else { grid.x[i] };
            let y = if j + 1 < ny { grid.y[j] + 1e-9 * (grid.y[j + 1] - grid.y[j]) } else { grid.y[j] };
            let s = sampler.at([x, y]);
            e.push(match s.inside {
                Inside::Electrode(_) => [0.0, 0.0],
                Inside::Region(_) => s.e.map(to_kv_per_mm),
            });
        }
    }
    let _ = writeln!(o, "POINT_DATA {}", grid.nodes());
    // array names carry the case's convention: potential_kv_rms, …
    let v = case.operation.values.name();
    let _ = writeln!(o, "SCALARS potential_kv_{v} double 1\nLOOKUP_TABLE default");
    for v in phi {
        let _ = writeln!(o, "{:e}", to_kv(*v));
    }
    let _ = writeln!(o, "VECTORS e_kv_per_mm_{v} double");
    for v in &e {
        let _ = writeln!(o, "{:e} {:e} 0", v[0], v[1]);
    }
    let _ = writeln!(o, "SCALARS e_magnitude_kv_per_mm_{v} double 1\nLOOKUP_TABLE default");
    for v in &e {
        let _ = writeln!(o, "{:e}", v[0].hypot(v[1]));
    }
    let _ = writeln!(o, "CELL_DATA {}", grid.cells());
    // The parts table lists the regions that own cells, in region order.
    let mut number = vec![0usize; layout.regions.len()];
    let mut next = 0;
    for (r, cells) in layout.region_cell_counts().into_iter().enumerate() {
        if cells > 0 {
            next += 1;
            number[r] = next;
        }
    }
    let _ = writeln!(o, "SCALARS part_number int 1\nLOOKUP_TABLE default");
    for &r in &layout.cell_region {
        let _ = writeln!(o, "{}", if r == CONDUCTOR { 0 } else { number[r as usize] });
    }
    o
}
