//! The command line's arguments, one struct per subcommand (clap derive). The export options
//! of `run` and `export` are [`ExportRequest`], flattened into both.

use std::path::PathBuf;

use clap::{Args, CommandFactory, FromArgMatches, Parser, Subcommand, ValueEnum};
use forefield_engine::export::column_word;
use forefield_engine::plants::pft::PlantType;
use forefield_engine::sample;

use crate::exports::ExportRequest;

/// forefield: glacier retreat and plant colonisation scenarios for planners
#[derive(Debug, Parser)]
#[command(
    name = "forefield",
    // A repeated option takes its last value, as it always has.
    args_override_self = true,
    after_help = "`forefield COMMAND --help` lists a command's options.\n\n\
                  Outputs are planning-level scenarios, not hazard assessments or forecasts; \
                  consult local\nauthorities and qualified professionals about lakes, slopes \
                  and siting."
)]
pub struct Cli {
    /// `None`: no words at all, answered with the help.
    #[command(subcommand)]
    pub command: Option<Command>,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Write the invented demo valley as GeoTIFFs
    Sample(SampleArgs),
    /// Describe a GeoTIFF grid (size, georeference, range)
    Info(InfoArgs),
    /// Shaded relief with the elevation ramp, one pixel a cell
    Relief(ReliefArgs),
    /// Run ice and plants of a scenario, write the summary, timeline and exports
    #[command(long_about = RUN_ABOUT)]
    Run(RunArgs),
    /// Write snapshots, CSV, GeoTIFF and GeoJSON of any year and layer from a finished run
    #[command(long_about = EXPORT_ABOUT)]
    Export(ExportArgs),
    /// Time the ice run, the coupled run and the dispersal, as JSON lines
    ///
    /// Times the 200-year ice and coupled runs on the large sample valley and the fast
    /// dispersal against direct convolution, and prints medians over repeated runs as JSON
    /// lines.
    Bench(BenchArgs),
    /// Serve a folder on 127.0.0.1
    Serve(ServeArgs),
    /// Publish the built page for any static host, and as one file that opens offline
    ///
    /// Writes the built page as a folder for any static host, kept offline by a service
    /// worker, and OUT/forefield.html, one file that opens from file://.
    Dist(DistArgs),
}

const RUN_ABOUT: &str = "\
Runs the coupled ice and plant model of a scenario file and writes the yearly summary (CSV),
the timeline, the terrain it ran on, ice thickness for the scenario's output years and the
last year's exposure years (GeoTIFF), and the exports asked for. Grid file names in the
scenario are relative to the scenario file.";

const EXPORT_ABOUT: &str = "\
Writes any export for any year and layer from a finished run folder (its timeline, terrain
and scenario) without running the model again.";

#[derive(Debug, Args)]
pub struct SampleArgs {
    /// Cells along each side (cells of 25 m), 16 to 2048
    #[arg(long, value_name = "N", default_value_t = sample::SMALL_SIZE,
          value_parser = parse_size, allow_negative_numbers = true)]
    pub size: usize,
    /// Output folder
    #[arg(long, value_name = "DIR", default_value = "sample-grids")]
    pub out: PathBuf,
}

#[derive(Debug, Args)]
pub struct InfoArgs {
    /// The GeoTIFF to describe
    #[arg(value_name = "FILE.tif")]
    pub file: PathBuf,
}

#[derive(Debug, Args)]
pub struct ReliefArgs {
    /// Elevation GeoTIFF
    #[arg(value_name = "DEM.tif")]
    pub dem: PathBuf,
    /// PNG to write
    #[arg(value_name = "OUT.png")]
    pub out: PathBuf,
}

#[derive(Debug, Args)]
pub struct RunArgs {
    /// The scenario; grid and polygon file names in it are relative to it
    #[arg(value_name = "SCENARIO.json")]
    pub scenario: PathBuf,
    /// Output folder
    #[arg(long, value_name = "DIR", default_value = "out")]
    pub out: PathBuf,
    /// GeoTIFF of succession stage codes 0-6 to start the plants from
    ///
    /// Default: each cell starts at its potential vegetation.
    #[arg(long, value_name = "FILE", conflicts_with = "ice_only")]
    pub vegetation: Option<PathBuf>,
    /// Run the ice model alone
    #[arg(long)]
    pub ice_only: bool,
    /// Working cell size, m
    ///
    /// The surface DEM is coarsened on load to the whole multiple of its cell nearest M
    /// (area mean); a DEM over the model's cell limit is coarsened to fit in any case.
    #[arg(long, value_name = "M", value_parser = parse_cell_size,
          allow_negative_numbers = true, verbatim_doc_comment)]
    pub cell_size: Option<f64>,
    #[command(flatten)]
    pub export: ExportRequest,
}

#[derive(Debug, Args)]
pub struct ExportArgs {
    /// A folder written by `forefield run`
    #[arg(value_name = "RUN_DIR")]
    pub run_dir: PathBuf,
    /// Output folder (default RUN_DIR)
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    #[command(flatten)]
    pub export: ExportRequest,
}

#[derive(Debug, Args)]
pub struct BenchArgs {
    /// Folder of the large sample valley (`forefield sample --size 1024`)
    #[arg(long, value_name = "DIR", default_value = "sample-grids/large")]
    pub grids: PathBuf,
    /// Timed runs of each part; the median and spread are printed
    #[arg(long, value_name = "N", default_value_t = crate::bench::DEFAULT_REPEATS,
          value_parser = parse_repeats, allow_negative_numbers = true)]
    pub repeats: usize,
    /// Time this part alone (default all)
    #[arg(long, value_name = "PART")]
    pub only: Option<BenchPart>,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum BenchPart {
    /// The 200-year ice run
    Ice,
    /// The 200-year coupled ice and plant run
    Coupled,
    /// The fast dispersal against direct convolution
    Dispersal,
    /// Loading a 10,000 x 10,000 cell DEM
    #[value(name = "large_dem")]
    LargeDem,
}

#[derive(Debug, Args)]
pub struct ServeArgs {
    /// Folder to serve
    #[arg(long, value_name = "DIR", default_value = "www")]
    pub dir: PathBuf,
    /// Port on 127.0.0.1
    #[arg(long, value_name = "P", default_value_t = 8765, value_parser = parse_port)]
    pub port: u16,
}

#[derive(Debug, Args)]
pub struct DistArgs {
    /// The built page folder
    #[arg(long, value_name = "DIR", default_value = "www")]
    pub from: PathBuf,
    /// Folder to publish into
    #[arg(long, value_name = "DIR", default_value = "dist")]
    pub out: PathBuf,
}

/// The parser with what only the engine knows at run time: the default plant types' layer
/// names in the help of `run` and `export`.
pub fn command() -> clap::Command {
    let types = plant_types_help();
    Cli::command()
        .mut_subcommand("run", |c| c.after_help(types.clone()))
        .mut_subcommand("export", |c| c.after_help(types))
}

/// Parses the process's arguments; help and usage errors end the program here.
pub fn parse() -> Cli {
    let matches = command().get_matches();
    Cli::from_arg_matches(&matches).unwrap_or_else(|error| error.exit())
}

fn plant_types_help() -> String {
    let types: String = PlantType::defaults()
        .iter()
        .enumerate()
        .map(|(t, plant)| format!("\n  cover:{} (or cover:{t})", column_word(&plant.name)))
        .collect();
    format!("The default plant types, for --layers cover:TYPE:{types}")
}

// The value is already quoted in clap's own part of the message.

fn parse_size(text: &str) -> Result<usize, &'static str> {
    match text.parse() {
        Ok(size) if (16..=2048).contains(&size) => Ok(size),
        Ok(_) => Err("outside 16..=2048 cells"),
        Err(_) => Err("not a whole number"),
    }
}

fn parse_port(text: &str) -> Result<u16, &'static str> {
    text.parse().map_err(|_| "not a port number (0 to 65535)")
}

fn parse_cell_size(text: &str) -> Result<f64, &'static str> {
    match text.parse::<f64>() {
        Ok(size) if size.is_finite() && size > 0.0 => Ok(size),
        _ => Err("not a cell size in metres above 0, e.g. --cell-size 10"),
    }
}

fn parse_repeats(text: &str) -> Result<usize, &'static str> {
    match text.parse() {
        Ok(n) if n > 0 => Ok(n),
        _ => Err("not a whole number above 0"),
    }
}

/// `COL,ROW` of `--cell`.
pub fn parse_cell(text: &str) -> Result<(usize, usize), &'static str> {
    text.split_once(',')
        .and_then(|(c, r)| Some((c.trim().parse().ok()?, r.trim().parse().ok()?)))
        .ok_or("not COL,ROW (two whole numbers)")
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::error::ErrorKind;

    fn parse(words: &[&str]) -> Result<Cli, clap::Error> {
        Cli::try_parse_from(std::iter::once("forefield").chain(words.iter().copied()))
    }

    fn run_args(words: &[&str]) -> RunArgs {
        match parse(words).unwrap().command {
            Some(Command::Run(args)) => args,
            other => panic!("not a run: {other:?}"),
        }
    }

    /// The message a refused command line gets, as printed.
    fn refusal(words: &[&str]) -> String {
        parse(words).unwrap_err().to_string()
    }

    #[test]
    fn the_parser_is_consistent() {
        command().debug_assert();
    }

    #[test]
    fn run_takes_its_defaults_and_repeated_cells_and_zones() {
        let args = run_args(&["run", "s.json"]);
        assert_eq!(args.scenario, PathBuf::from("s.json"));
        assert_eq!(args.out, PathBuf::from("out"));
        assert!(args.vegetation.is_none() && !args.ice_only && args.cell_size.is_none());
        assert!(args.export.years.is_none() && args.export.layers.is_none());
        let args = run_args(&[
            "run",
            "s.json",
            "--cell",
            "3,4",
            "--zone",
            "a.geojson",
            "--cell",
            " 10 , 20 ",
            "--zone",
            "b c.geojson",
            "--cell-size",
            "10",
            "--ice-only",
        ]);
        assert_eq!(args.export.cells, vec![(3, 4), (10, 20)]);
        assert_eq!(args.export.zones, vec!["a.geojson", "b c.geojson"]);
        assert_eq!(args.cell_size, Some(10.0));
        assert!(args.ice_only);
    }

    #[test]
    fn comma_lists_stay_one_value_spaces_and_empty_ones_included() {
        let args = run_args(&[
            "run",
            "s.json",
            "--layers",
            "stage,cover:grasses and sedges",
            "--years",
            "2050,last",
            "--formats",
            "",
        ]);
        assert_eq!(
            args.export.layers.as_deref(),
            Some("stage,cover:grasses and sedges")
        );
        assert_eq!(args.export.years.as_deref(), Some("2050,last"));
        assert_eq!(args.export.formats.as_deref(), Some(""));
    }

    #[test]
    fn a_repeated_option_keeps_its_last_value() {
        let args = run_args(&["run", "s.json", "--years", "2050", "--years", "2060"]);
        assert_eq!(args.export.years.as_deref(), Some("2060"));
    }

    #[test]
    fn export_defaults_its_output_to_the_run_folder() {
        match parse(&["export", "r", "--layers", "cover:1", "--formats", "tif"])
            .unwrap()
            .command
        {
            Some(Command::Export(args)) => {
                assert_eq!(args.run_dir, PathBuf::from("r"));
                assert!(args.out.is_none());
                assert_eq!(args.export.layers.as_deref(), Some("cover:1"));
            }
            other => panic!("not an export: {other:?}"),
        }
    }

    #[test]
    fn other_commands_take_their_defaults() {
        match parse(&["sample"]).unwrap().command {
            Some(Command::Sample(a)) => {
                assert_eq!((a.size, a.out), (400, PathBuf::from("sample-grids")))
            }
            other => panic!("{other:?}"),
        }
        match parse(&["serve"]).unwrap().command {
            Some(Command::Serve(a)) => assert_eq!((a.dir, a.port), (PathBuf::from("www"), 8765)),
            other => panic!("{other:?}"),
        }
        match parse(&["dist", "--out", "d"]).unwrap().command {
            Some(Command::Dist(a)) => {
                assert_eq!((a.from, a.out), (PathBuf::from("www"), PathBuf::from("d")))
            }
            other => panic!("{other:?}"),
        }
        match parse(&["bench", "--only", "large_dem", "--repeats", "5"])
            .unwrap()
            .command
        {
            Some(Command::Bench(a)) => {
                assert_eq!(a.grids, PathBuf::from("sample-grids/large"));
                assert_eq!((a.only, a.repeats), (Some(BenchPart::LargeDem), 5));
            }
            other => panic!("{other:?}"),
        }
        assert!(parse(&[]).unwrap().command.is_none());
    }

    #[test]
    fn bad_input_is_refused_naming_the_option() {
        let missing = parse(&["run", "s.json", "--out"]).unwrap_err();
        assert_eq!(missing.kind(), ErrorKind::InvalidValue);
        assert!(missing.to_string().contains("--out"), "{missing}");
        let unknown = parse(&["run", "s.json", "--colour", "red"]).unwrap_err();
        assert_eq!(unknown.kind(), ErrorKind::UnknownArgument);
        assert!(unknown.to_string().contains("--colour"), "{unknown}");
        assert_eq!(
            parse(&["run"]).unwrap_err().kind(),
            ErrorKind::MissingRequiredArgument
        );
        assert_eq!(
            parse(&["run", "a.json", "b.json"]).unwrap_err().kind(),
            ErrorKind::UnknownArgument
        );
        for (words, flag, says) in [
            (
                &["sample", "--size", "5"][..],
                "--size",
                "outside 16..=2048",
            ),
            (&["sample", "--size", "-5"], "--size", "not a whole number"),
            (&["serve", "--port", "99999"], "--port", "not a port number"),
            (&["run", "s", "--cell", "3"], "--cell", "not COL,ROW"),
            (
                &["run", "s", "--cell-size", "-2"],
                "--cell-size",
                "cell size in metres",
            ),
            (&["bench", "--repeats", "0"], "--repeats", "above 0"),
            (&["bench", "--only", "lakes"], "--only", "dispersal"),
        ] {
            let message = refusal(words);
            assert!(
                message.contains(flag) && message.contains(says),
                "{words:?}: {message}"
            );
        }
        let both = refusal(&["run", "s", "--ice-only", "--vegetation", "v.tif"]);
        assert!(
            both.contains("--ice-only") && both.contains("--vegetation"),
            "{both}"
        );
        assert_eq!(
            parse(&["plant"]).unwrap_err().kind(),
            ErrorKind::InvalidSubcommand
        );
    }

    #[test]
    fn run_help_lists_the_default_plant_types_layer_names() {
        let help = command()
            .try_get_matches_from(["forefield", "run", "--help"])
            .unwrap_err();
        assert_eq!(help.kind(), ErrorKind::DisplayHelp);
        let text = help.to_string();
        assert!(text.contains("cover:TYPE"), "{text}");
        for (t, plant) in PlantType::defaults().iter().enumerate() {
            let line = format!("cover:{} (or cover:{t})", column_word(&plant.name));
            assert!(text.contains(&line), "{line} missing from\n{text}");
        }
        for sub in [
            "sample", "info", "relief", "export", "bench", "serve", "dist",
        ] {
            let help = command()
                .try_get_matches_from(["forefield", sub, "-h"])
                .unwrap_err();
            assert_eq!(help.kind(), ErrorKind::DisplayHelp, "{sub}");
        }
    }
}
