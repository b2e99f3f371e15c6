//! `forefield`: the native command line over the engine (sample data, grid info, runs and
//! exports, static server); its arguments are in `args`.

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

mod args;
mod bench;
mod dist;
mod export;
mod exports;
mod run;
mod serve;
mod zones;

use std::path::Path;
use std::process::ExitCode;

use anyhow::{Context, Result};
use forefield_engine::io::geotiff::{
    read_geotiff, write_geotiff, write_geotiff_with, SampleType, TiffCompression, WriteOptions,
};
use forefield_engine::sample;

use crate::args::{Cli, Command, DistArgs, SampleArgs};

/// A closed pipe is the reader's choice to stop: exit 0. Any other write error is reported.
fn stdout_failed(error: std::io::Error) -> ! {
    if error.kind() == std::io::ErrorKind::BrokenPipe {
        std::process::exit(0);
    }
    eprintln!("forefield: error: writing to standard output: {error}");
    std::process::exit(1);
}

fn main() -> ExitCode {
    match dispatch(args::parse()) {
        Ok(()) => ExitCode::SUCCESS,
        Err(error) => {
            eprintln!("forefield: error: {error:#}");
            ExitCode::from(1)
        }
    }
}

fn dispatch(cli: Cli) -> Result<()> {
    let Some(command) = cli.command else {
        outln!("{}", args::command().render_help());
        return Ok(());
    };
    match command {
        Command::Sample(args) => write_sample(args),
        Command::Info(args) => info(&args.file),
        Command::Relief(args) => relief(&args.dem, &args.out),
        Command::Run(args) => run::run(args),
        Command::Export(args) => export::export(args),
        Command::Bench(args) => bench::bench(args),
        Command::Serve(args) => serve::serve(&args.dir, args.port),
        Command::Dist(DistArgs { from, out }) => {
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
    }
}

fn write_sample(SampleArgs { size, out }: SampleArgs) -> Result<()> {
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

fn info(path: &Path) -> Result<()> {
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

fn relief(dem_path: &Path, out_path: &Path) -> Result<()> {
    let (dem_name, out_name) = (dem_path.display().to_string(), out_path.display());
    let bytes = std::fs::read(dem_path).with_context(|| format!("reading {dem_name}"))?;
    let dem = read_geotiff(&bytes, &dem_name)?;
    let (lo, hi) = forefield_engine::base::terrain::check_elevations(&dem, &dem_name)?;
    let shade = forefield_engine::base::terrain::derivatives(&dem, Default::default()).hillshade;
    let mut rgba = Vec::new();
    forefield_engine::view::render::render_shaded(
        &dem,
        &shade,
        forefield_engine::view::render::ELEVATION_RAMP,
        lo,
        hi,
        &mut rgba,
    );
    let png = forefield_engine::view::render::encode_png(&rgba, dem.n_cols(), dem.n_rows())?;
    std::fs::write(out_path, png).with_context(|| format!("writing {out_name}"))?;
    outln!("wrote {out_name}");
    Ok(())
}
