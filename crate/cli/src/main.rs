//! `forefield`: the native command line over the engine (sample data, grid info, static server).

/// `println!` that ends the program quietly when standard output is closed early
/// (`forefield info F.tif | head`) instead of panicking.
macro_rules! outln {
    ($($arg:tt)*) => {{
        use std::io::Write as _;
        if let Err(error) = writeln!(std::io::stdout(), $($arg)*) {
            $crate::stdout_failed(error);
        }
    }};
}

mod bench;
mod dist;
mod export;
mod exports;
mod run;
mod serve;
mod zones;

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::{bail, Context, Result};
use forefield_engine::geotiff::{
    read_geotiff, write_geotiff, write_geotiff_with, SampleType, TiffCompression, WriteOptions,
};
use forefield_engine::sample;

/// A closed pipe is the reader's choice to stop: exit 0. Any other write error is reported.
fn stdout_failed(error: std::io::Error) -> ! {
    if error.kind() == std::io::ErrorKind::BrokenPipe {
        std::process::exit(0);
    }
    eprintln!("forefield: error: writing to standard output: {error}");
    std::process::exit(1);
}

const USAGE: &str = "\
forefield: glacier retreat and plant colonisation scenarios for planners

USAGE:
    forefield sample [--size N] [--out DIR]   write the invented demo valley as GeoTIFFs
                                              (default size 400 cells of 25 m, DIR sample-grids)
    forefield info FILE.tif                   describe a GeoTIFF grid (size, georeference, range)
    forefield relief DEM.tif OUT.png          shaded relief with the elevation ramp, one pixel a cell
    forefield run SCENARIO.json [--out DIR]   run ice and plants of a scenario, write the summary,
                                              timeline and exports (default DIR out; `run --help`)
    forefield export RUN_DIR [--years ...]    write snapshots, CSV, GeoTIFF and GeoJSON of any year
                                              and layer from a finished run (`export --help`)
    forefield bench [--grids DIR] [--repeats N] [--only ice|coupled|dispersal]
                                              time the 200-year ice and coupled runs and the fast
                                              dispersal against direct convolution, as JSON lines
                                              (default DIR sample-grids/large)
    forefield serve [--dir DIR] [--port P]    serve a folder on 127.0.0.1 (default www, 8765)
    forefield dist [--from DIR] [--out DIR]   publish the built page: a folder for any static host
                                              and OUT/forefield.html, one file that opens offline
                                              (default www, dist)
    forefield help                            this text

Outputs are planning-level scenarios, not hazard assessments or forecasts; consult local
authorities and qualified professionals about lakes, slopes and siting.";

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    match dispatch(&args) {
        Ok(()) => ExitCode::SUCCESS,
        Err(error) => {
            eprintln!("forefield: error: {error:#}");
            ExitCode::from(1)
        }
    }
}

fn dispatch(args: &[String]) -> Result<()> {
    let Some(command) = args.first() else {
        outln!("{USAGE}");
        return Ok(());
    };
    let rest = &args[1..];
    match command.as_str() {
        "sample" => write_sample(rest),
        "info" => info(rest),
        "run" if wants_help(rest) => {
            outln!("{}", run::usage());
            Ok(())
        }
        "run" => run::run(rest),
        "export" if wants_help(rest) => {
            outln!("{}", export::usage());
            Ok(())
        }
        "export" => export::export(rest),
        "bench" => bench::bench(rest),
        "relief" => relief(rest),
        "serve" => {
            let dir = PathBuf::from(flag(rest, "--dir")?.unwrap_or_else(|| "www".into()));
            let port: u16 = match flag(rest, "--port")? {
                Some(p) => p
                    .parse()
                    .with_context(|| format!("--port {p:?} is not a port number"))?,
                None => 8765,
            };
            serve::serve(&dir, port)
        }
        "dist" => {
            let from = PathBuf::from(flag(rest, "--from")?.unwrap_or_else(|| "www".into()));
            let out = PathBuf::from(flag(rest, "--out")?.unwrap_or_else(|| "dist".into()));
            let published = dist::dist(&from, &out)?;
            outln!(
                "wrote {} ({} files, version {}) and {} ({:.1} MB, opens from file://)",
                out.display(),
                published.files,
                published.version,
                published.single_file.display(),
                published.single_file_bytes as f64 / 1e6
            );
            Ok(())
        }
        "help" | "--help" | "-h" => {
            outln!("{USAGE}");
            Ok(())
        }
        other => bail!("unknown command {other:?}\n\n{USAGE}"),
    }
}

fn wants_help(args: &[String]) -> bool {
    args.iter().any(|a| a == "--help" || a == "-h")
}

/// Value of `--name VALUE` in `args`, if given.
fn flag(args: &[String], name: &str) -> Result<Option<String>> {
    match args.iter().position(|a| a == name) {
        None => Ok(None),
        Some(i) => match args.get(i + 1) {
            Some(value) => Ok(Some(value.clone())),
            None => bail!("{name} needs a value"),
        },
    }
}

fn write_sample(args: &[String]) -> Result<()> {
    let size: usize = match flag(args, "--size")? {
        Some(s) => s
            .parse()
            .with_context(|| format!("--size {s:?} is not a whole number"))?,
        None => sample::SMALL_SIZE,
    };
    if !(16..=2048).contains(&size) {
        bail!("--size {size} is outside 16..=2048 cells");
    }
    let out = PathBuf::from(flag(args, "--out")?.unwrap_or_else(|| "sample-grids".into()));
    std::fs::create_dir_all(&out).with_context(|| format!("creating {}", out.display()))?;
    let valley = sample::generate(size);
    let write = |name: &str, bytes: Vec<u8>| -> Result<()> {
        let path = out.join(name);
        std::fs::write(&path, bytes).with_context(|| format!("writing {}", path.display()))?;
        outln!("wrote {}", path.display());
        Ok(())
    };
    write("valley_dem.tif", write_geotiff(&valley.surface_m))?;
    write("valley_bed.tif", write_geotiff(&valley.bed_m))?;
    write(
        "valley_ice_thickness.tif",
        write_geotiff(&valley.ice_thickness_m),
    )?;
    let codes = WriteOptions {
        sample_type: SampleType::U8,
        compression: TiffCompression::Deflate,
        horizontal_predictor: false,
    };
    write(
        "valley_vegetation.tif",
        write_geotiff_with(&valley.vegetation, codes)?,
    )?;
    Ok(())
}

fn info(args: &[String]) -> Result<()> {
    let Some(path) = args.first() else {
        bail!("info needs a GeoTIFF file")
    };
    let path = Path::new(path);
    let bytes = std::fs::read(path).with_context(|| format!("reading {}", path.display()))?;
    let grid = read_geotiff(&bytes, &path.display().to_string())?;
    let g = &grid.geometry;
    outln!("file: {}", path.display());
    outln!(
        "size: {} x {} cells ({} cells)",
        g.n_cols,
        g.n_rows,
        g.n_cells()
    );
    outln!("cell size: {} m", g.cell_size_m);
    outln!(
        "extent: west {} m, east {} m, south {} m, north {} m",
        g.west_m,
        g.east_m(),
        g.south_m(),
        g.north_m
    );
    outln!(
        "crs: {}",
        g.epsg
            .map_or("not stated".to_string(), |c| format!("EPSG:{c}"))
    );
    outln!("nodata cells: {}", g.n_cells() - grid.n_valid());
    if let Some((lo, hi)) = grid.value_range() {
        outln!("values: {lo} to {hi}");
    }
    Ok(())
}

fn relief(args: &[String]) -> Result<()> {
    let [dem_path, out_path, ..] = args else {
        bail!("relief needs DEM.tif and OUT.png")
    };
    let bytes = std::fs::read(dem_path).with_context(|| format!("reading {dem_path}"))?;
    let dem = read_geotiff(&bytes, dem_path)?;
    let (lo, hi) = forefield_engine::terrain::check_elevations(&dem, dem_path)?;
    let shade = forefield_engine::terrain::derivatives(&dem, Default::default()).hillshade;
    let mut rgba = Vec::new();
    forefield_engine::render::render_shaded(
        &dem,
        &shade,
        forefield_engine::render::ELEVATION_RAMP,
        lo,
        hi,
        &mut rgba,
    );
    let png = forefield_engine::render::encode_png(&rgba, dem.n_cols(), dem.n_rows())?;
    std::fs::write(out_path, png).with_context(|| format!("writing {out_path}"))?;
    outln!("wrote {out_path}");
    Ok(())
}
