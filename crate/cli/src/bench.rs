//! `forefield bench`: native timing of the 200-year ice run and of the coupled ice and
//! vegetation run (five default plant types) on the large sample valley, printed as JSON
//! lines (medians over repeated runs, since shared machines are noisy).

use std::time::Instant;

use anyhow::{Context, Result};
use forefield_engine::io::geotiff::read_geotiff;
use forefield_engine::plants::dispersal::{Boundary, DispersalOperator};
use forefield_engine::plants::kernels::{direct_convolution, Kernel};
use forefield_engine::plants::pft::PlantType;
use forefield_engine::run::coupled::CoupledSimulation;
use forefield_engine::run::scenario::Scenario;
use forefield_engine::run::simulation::{bed_from_surface, IceSimulation};
use forefield_engine::Grid;

use crate::args::{BenchArgs, BenchPart};

/// The scenario both the native and the wasm benchmark run (kept in step with bench.mjs).
pub const BENCH_SCENARIO_JSON: &str = r#"{"version": 1, "name": "benchmark", "n_years": 200}"#;
pub const DEFAULT_REPEATS: usize = 3;

/// Without `--only`, every part in turn.
pub fn bench(args: BenchArgs) -> Result<()> {
    let BenchArgs {
        grids: dir,
        repeats,
        only,
    } = args;
    let wanted = |part: BenchPart| only.is_none_or(|o| o == part);
    if wanted(BenchPart::Dispersal) {
        bench_dispersal(repeats)?;
        if only.is_some() {
            return Ok(());
        }
    }
    if wanted(BenchPart::LargeDem) {
        bench_large_dem()?;
        if only.is_some() {
            return Ok(());
        }
    }
    let read = |name: &str| -> Result<_> {
        let path = dir.join(name);
        let bytes = std::fs::read(&path).with_context(|| format!("reading {}", path.display()))?;
        Ok(read_geotiff(&bytes, &path.display().to_string())?)
    };
    let surface = read("valley_dem.tif")?;
    let ice = read("valley_ice_thickness.tif")?;
    let bed = bed_from_surface(&surface, &ice)?;
    let scenario = Scenario::from_json(BENCH_SCENARIO_JSON)?;
    if wanted(BenchPart::Ice) {
        bench_ice(&bed, &ice, &scenario, repeats)?;
    }
    if wanted(BenchPart::Coupled) {
        let stages = read("valley_vegetation.tif")?;
        bench_coupled(&bed, &ice, &stages, &scenario, repeats)?;
    }
    Ok(())
}

/// Peak resident memory (VmHWM) of this process, bytes; `reset` first restarts the peak from
/// the present use (Linux: writing 5 to /proc/self/clear_refs). `None` where unavailable.
fn peak_memory_bytes(reset: bool) -> Option<u64> {
    if reset {
        std::fs::write("/proc/self/clear_refs", "5").ok()?;
    }
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kb: u64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb * 1024)
}

/// A LiDAR-sized DEM (10,000 x 10,000 cells of 1 m in uncompressed strips, written strip by strip)
/// opened as the page and `forefield run` open a terrain: coarsened on load to fit the model's
/// cell limit. Reports the time and the peak memory the load adds above the file's bytes.
fn bench_large_dem() -> Result<()> {
    const SIDE: usize = 10_000;
    let geometry = forefield_engine::GridGeometry {
        n_cols: SIDE,
        n_rows: SIDE,
        cell_size_m: 1.0,
        west_m: 400_000.0,
        north_m: 5_100_000.0,
        epsg: Some(32632),
    };
    // Smooth ridges with metre-scale roughness, as a LiDAR surface has.
    let bytes = forefield_engine::io::geotiff::write_geotiff_rows(&geometry, 16, |row, values| {
        let y = row as f64;
        for (col, v) in values.iter_mut().enumerate() {
            let x = col as f64;
            *v = (2500.0
                + 400.0 * f64::sin(x / 1500.0) * f64::sin(y / 1100.0)
                + 0.3 * f64::sin(x * 1.7 + y * 0.9)) as f32;
        }
    })
    .map_err(|e| anyhow::anyhow!("{e}"))?;
    let before = peak_memory_bytes(true);
    let started = Instant::now();
    let read = forefield_engine::io::geotiff::read_geotiff_with(
        &bytes,
        "large.tif",
        forefield_engine::io::geotiff::ReadOptions::default(),
    )?;
    let seconds = started.elapsed().as_secs_f64();
    let peak = peak_memory_bytes(false);
    let g = read.grid.geometry;
    let added_mib = match (before, peak) {
        (Some(b), Some(p)) => format!("{:.1}", p.saturating_sub(b) as f64 / 1048576.0),
        _ => "null".into(),
    };
    outln!(
        "{{\"bench\":\"large_dem_load\",\"side\":\"native\",\"source_grid\":\"{SIDE}x{SIDE}\",\"source_cell_m\":1,\"file_mib\":{:.1},\"grid\":\"{}x{}\",\"cell_m\":{},\"seconds\":{seconds:.3},\"peak_memory_added_mib\":{added_mib},\"full_grid_mib\":{:.0}}}",
        bytes.len() as f64 / 1048576.0,
        g.n_cols,
        g.n_rows,
        g.cell_size_m,
        (SIDE * SIDE * 5) as f64 / 1048576.0,
    );
    Ok(())
}

/// Sorted seconds: (median, min, max).
fn spread(mut seconds: Vec<f64>) -> (f64, f64, f64) {
    seconds.sort_by(f64::total_cmp);
    (
        seconds[seconds.len() / 2],
        seconds[0],
        seconds[seconds.len() - 1],
    )
}

fn bench_ice(bed: &Grid, ice: &Grid, scenario: &Scenario, repeats: usize) -> Result<()> {
    let mut seconds = Vec::with_capacity(repeats);
    let mut last = None;
    for _ in 0..repeats {
        // Only the yearly steps are timed, as in bench.mjs, where setup also decodes GeoTIFFs.
        let mut simulation = IceSimulation::new(bed, ice, scenario)?;
        let started = Instant::now();
        while simulation.step_year().is_some() {}
        seconds.push(started.elapsed().as_secs_f64());
        last = Some(simulation);
    }
    let simulation = last.context("no repeats")?;
    let (median, min, max) = spread(seconds);
    let years = simulation.summary().len().saturating_sub(1).max(1);
    let cell_updates: u64 = simulation
        .summary()
        .iter()
        .map(|row| row.cell_updates)
        .sum();
    let start = simulation.summary()[0];
    let end = simulation.summary()[years];
    let g = simulation.geometry();
    outln!(
        "{{\"bench\":\"ice_run\",\"side\":\"native\",\"grid\":\"{}x{}\",\"years\":{years},\"repeats\":{repeats},\"seconds_median\":{median:.4},\"seconds_min\":{min:.4},\"seconds_max\":{max:.4},\"seconds_per_year\":{:.6},\"ice_cell_updates_per_second\":{:.0},\"ice_cells_start\":{},\"ice_area_km2_start\":{:.3},\"ice_area_km2_end\":{:.3}}}",
        g.n_cols,
        g.n_rows,
        median / years as f64,
        cell_updates as f64 / median,
        (start.ice_area_km2 * 1e6 / g.cell_area_m2()).round(),
        start.ice_area_km2,
        end.ice_area_km2,
    );
    Ok(())
}

fn bench_coupled(
    bed: &Grid,
    ice: &Grid,
    stages: &Grid,
    scenario: &Scenario,
    repeats: usize,
) -> Result<()> {
    let mut seconds = Vec::with_capacity(repeats);
    let mut last = None;
    for _ in 0..repeats {
        let mut run = CoupledSimulation::new(bed, ice, scenario, Some(stages))?;
        let started = Instant::now();
        let mut end = None;
        while let Some(row) = run.step_year() {
            end = Some(row);
        }
        seconds.push(started.elapsed().as_secs_f64());
        last = end;
    }
    let end = last.context("the benchmark scenario simulates no years")?;
    let (median, min, max) = spread(seconds);
    let years = scenario.n_years as usize;
    let n_types = scenario.vegetation.types.len();
    let forest_km2 = end.vegetation.stage_area_km2[5] + end.vegetation.stage_area_km2[6];
    let g = bed.geometry;
    outln!(
        "{{\"bench\":\"coupled_run\",\"side\":\"native\",\"grid\":\"{}x{}\",\"years\":{years},\"plant_types\":{n_types},\"repeats\":{repeats},\"seconds_median\":{median:.4},\"seconds_min\":{min:.4},\"seconds_max\":{max:.4},\"seconds_per_year\":{:.6},\"cell_years_per_second\":{:.0},\"forest_area_km2_end\":{forest_km2:.3}}}",
        g.n_cols,
        g.n_rows,
        median / years as f64,
        (g.n_cells() * years) as f64 / median,
    );
    Ok(())
}

/// The fast convolution against the direct one at a 40-cell kernel radius: the pioneer
/// type's 2Dt kernel on a 256 x 256 grid of 25 m cells with scattered seed sources, the
/// fast one at full resolution (as the direct one) and on the coupled run's 2 x 2 blocks.
fn bench_dispersal(repeats: usize) -> Result<()> {
    const N: usize = 256;
    const RADIUS_CELLS: usize = 40;
    const CELL_M: f64 = 25.0;
    let pioneer = PlantType::pioneer_herbs();
    let kernel = Kernel::from_mean(
        pioneer.kernel,
        pioneer.mean_dispersal_m,
        pioneer.kernel_shape_p,
    )?;
    // A fixed scatter of sources: every 7th cell of a block and a few lone cells.
    let production: Vec<f32> = (0..N * N)
        .map(|i| {
            let (row, col) = (i / N, i % N);
            let block = (80..140).contains(&row) && (60..120).contains(&col) && i % 7 == 0;
            let lone = (row * 31 + col * 17) % 997 == 0;
            if block || lone {
                100.0
            } else {
                0.0
            }
        })
        .collect();
    let mut direct = vec![0.0; N * N];
    let started = Instant::now();
    direct_convolution(
        &kernel,
        CELL_M,
        N,
        N,
        RADIUS_CELLS,
        &production,
        &mut direct,
    );
    let direct_s = started.elapsed().as_secs_f64();
    let mut fast_s = [0.0; 2];
    let mut error = [0.0; 2];
    for (slot, base_factor) in [1usize, 2].into_iter().enumerate() {
        let operator =
            DispersalOperator::new(&kernel, CELL_M, N, N, base_factor, Boundary::Absorbing);
        let mut scratch = operator.scratch();
        let mut fast = vec![0.0; N * N];
        let mut seconds = Vec::with_capacity(repeats);
        for _ in 0..repeats.max(3) {
            let started = Instant::now();
            operator.apply(&production, &mut fast, &mut scratch);
            seconds.push(started.elapsed().as_secs_f64());
        }
        fast_s[slot] = spread(seconds).0;
        let diff: f64 = fast
            .iter()
            .zip(&direct)
            .map(|(&a, &b)| f64::from((a - b).abs()))
            .sum();
        error[slot] = diff / direct.iter().map(|&b| f64::from(b)).sum::<f64>();
    }
    outln!(
        "{{\"bench\":\"dispersal_fast_vs_direct\",\"side\":\"native\",\"grid\":\"{N}x{N}\",\"kernel\":\"2dt mean {} m\",\"radius_cells\":{RADIUS_CELLS},\"direct_seconds\":{direct_s:.4},\"fast_seconds\":{:.6},\"fast_blocks_seconds\":{:.6},\"speedup\":{:.0},\"speedup_blocks\":{:.0},\"relative_l1_difference\":{:.4},\"relative_l1_difference_blocks\":{:.4}}}",
        pioneer.mean_dispersal_m,
        fast_s[0],
        fast_s[1],
        direct_s / fast_s[0],
        direct_s / fast_s[1],
        error[0],
        error[1],
    );
    Ok(())
}
