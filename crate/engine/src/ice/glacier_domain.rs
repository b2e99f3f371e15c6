//! Glacier domain: the cells where the surface balance may add ice. By default the starting
//! ice, the ring of cells touching it, and the ground whose D8 flow path on the surface
//! (steepest descent to one of the eight neighbours; O'Callaghan & Mark 1984, Comput. Vision
//! Graph. Image Process. 28:323-344) reaches either, so snow that falls on the glacier's own basin feeds it and high ground that
//! drains elsewhere never grows ice of its own. A planner may give the domain instead, as a
//! GeoTIFF mask or a GeoJSON outline (see `run::inputs`).
//!
//! Ice may still flow out of the domain and advance; outside it the balance only melts.

use crate::base::grid::Grid;

/// Cells of the default domain: every valid cell with starting ice (thickness above zero),
/// the ring of cells touching it (ground against the margin, where slope water and snow from
/// above collect in the hollow between the ice surface and the ground), and every valid cell
/// whose D8 path on `surface_m` runs into one of those. A path that ends in a pit or at the
/// grid edge away from the ice stays outside.
///
/// # Panics
/// If `ice_thickness_m` does not have one value per cell (a programming error).
pub fn drainage_domain(surface_m: &Grid, ice_thickness_m: &[f32]) -> Vec<bool> {
    let g = surface_m.geometry;
    let (n_cols, n_rows) = (g.n_cols, g.n_rows);
    assert_eq!(ice_thickness_m.len(), n_cols * n_rows);
    let valid = |idx: usize| !surface_m.nodata[idx];
    let receiver = d8_receivers(surface_m);
    let mut domain = vec![false; n_cols * n_rows];
    let mut queue: Vec<usize> = Vec::new();
    for (idx, &h) in ice_thickness_m.iter().enumerate() {
        if valid(idx) && h > 0.0 {
            domain[idx] = true;
            queue.push(idx);
        }
    }
    let ice_cells = queue.clone();
    for idx in ice_cells {
        let (row, col) = (idx / n_cols, idx % n_cols);
        for (dr, dc) in NEIGHBOURS {
            let Some(n) = neighbour(n_cols, n_rows, row, col, dr, dc) else {
                continue;
            };
            if valid(n) && !domain[n] {
                domain[n] = true;
                queue.push(n);
            }
        }
    }
    // Walk upstream: a neighbour belongs when its receiver is a domain cell.
    while let Some(idx) = queue.pop() {
        let (row, col) = (idx / n_cols, idx % n_cols);
        for (dr, dc) in NEIGHBOURS {
            let Some(n) = neighbour(n_cols, n_rows, row, col, dr, dc) else {
                continue;
            };
            if !domain[n] && receiver[n] == idx as u32 {
                domain[n] = true;
                queue.push(n);
            }
        }
    }
    domain
}

/// The eight neighbours as (row, column) offsets.
pub(crate) const NEIGHBOURS: [(isize, isize); 8] = [
    (-1, -1),
    (-1, 0),
    (-1, 1),
    (0, -1),
    (0, 1),
    (1, -1),
    (1, 0),
    (1, 1),
];

/// Index of the cell at offset (`dr`, `dc`) from (`row`, `col`), if it is on the grid.
pub(crate) fn neighbour(
    n_cols: usize,
    n_rows: usize,
    row: usize,
    col: usize,
    dr: isize,
    dc: isize,
) -> Option<usize> {
    let (r, c) = (row as isize + dr, col as isize + dc);
    (r >= 0 && c >= 0 && r < n_rows as isize && c < n_cols as isize)
        .then(|| r as usize * n_cols + c as usize)
}

/// Marks a cell without a lower neighbour (a pit, a flat or nodata).
const NO_RECEIVER: u32 = u32::MAX;

/// The D8 receiver of each cell: the valid neighbour with the steepest drop (drop over
/// distance, diagonals at sqrt 2), the first in [`NEIGHBOURS`] order on a tie.
fn d8_receivers(surface_m: &Grid) -> Vec<u32> {
    let g = surface_m.geometry;
    let (n_cols, n_rows) = (g.n_cols, g.n_rows);
    let mut receiver = vec![NO_RECEIVER; n_cols * n_rows];
    for row in 0..n_rows {
        for col in 0..n_cols {
            let idx = row * n_cols + col;
            if surface_m.nodata[idx] {
                continue;
            }
            let z = surface_m.values[idx];
            let mut best = 0.0_f32;
            for (dr, dc) in NEIGHBOURS {
                let Some(n) = neighbour(n_cols, n_rows, row, col, dr, dc) else {
                    continue;
                };
                if surface_m.nodata[n] {
                    continue;
                }
                let distance = if dr != 0 && dc != 0 {
                    std::f32::consts::SQRT_2
                } else {
                    1.0
                };
                let drop = (z - surface_m.values[n]) / distance;
                if drop > best {
                    best = drop;
                    receiver[idx] = n as u32;
                }
            }
        }
    }
    receiver
}

/// Fraction of each ice-grid block's valid cells that lie in the domain (0 for a block
/// without valid cells): the share of the block's accumulation the balance keeps.
pub fn block_fractions(
    domain: &[bool],
    valid: &[bool],
    n_cols: usize,
    n_rows: usize,
    block: usize,
) -> Vec<f64> {
    let (ice_cols, ice_rows) = (n_cols.div_ceil(block), n_rows.div_ceil(block));
    let mut inside = vec![0usize; ice_cols * ice_rows];
    let mut count = vec![0usize; ice_cols * ice_rows];
    for row in 0..n_rows {
        for col in 0..n_cols {
            let idx = row * n_cols + col;
            if valid[idx] {
                let b = (row / block) * ice_cols + col / block;
                count[b] += 1;
                inside[b] += usize::from(domain[idx]);
            }
        }
    }
    inside
        .iter()
        .zip(&count)
        .map(|(&i, &n)| if n > 0 { i as f64 / n as f64 } else { 0.0 })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::base::grid::GridGeometry;

    fn grid(n_cols: usize, n_rows: usize, values: Vec<f32>) -> Grid {
        Grid::from_values(
            GridGeometry {
                n_cols,
                n_rows,
                cell_size_m: 10.0,
                west_m: 0.0,
                north_m: 0.0,
                epsg: Some(32632),
            },
            values,
        )
    }

    #[test]
    fn ground_draining_into_the_ice_joins_and_a_separate_summit_does_not() {
        // Columns 0-5 fall east to ice in column 5; column 6 is ground against the ice (the
        // margin ring); column 7 a hollow beyond it, into which a separate summit (columns
        // 8-9) drains, away from the ice.
        let n_cols = 10;
        let profile = [
            3050.0, 3040.0, 3030.0, 3020.0, 3010.0, 3000.0, 2990.0, 2980.0, 3100.0, 3200.0,
        ];
        let mut z = Vec::new();
        for row in 0..3 {
            for &base in &profile {
                z.push(base + row as f32 * 0.1);
            }
        }
        let surface = grid(n_cols, 3, z);
        let mut ice = vec![0.0_f32; 30];
        for row in 0..3 {
            ice[row * n_cols + 5] = 20.0;
        }
        let domain = drainage_domain(&surface, &ice);
        for row in 0..3 {
            for col in 0..n_cols {
                let expected = col <= 6;
                assert_eq!(domain[row * n_cols + col], expected, "row {row} col {col}");
            }
        }
    }

    #[test]
    fn block_fractions_count_valid_cells_only() {
        let domain = [true, false, true, true, false, false];
        let valid = [true, true, true, false, true, true];
        // 3 x 2 cells, blocks of 2: block 0 = cols 0-1, block 1 = col 2.
        let f = block_fractions(&domain, &valid, 3, 2, 2);
        assert_eq!(f, vec![1.0 / 3.0, 0.5]);
    }
}
