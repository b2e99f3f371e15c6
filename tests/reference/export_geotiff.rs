//! GeoTIFF layer exports read back with the `tiff` crate's decoder directly (not the engine's
//! reader): size, sample values and the georeference tags of OGC GeoTIFF 1.1 (OGC 19-008r4:
//! ModelPixelScale 33550, ModelTiepoint 33922, GeoKeyDirectory 34735 with
//! ProjectedCRSGeoKey 3072) equal those of the input DEM, so a GIS lays the layer in place.
//! Also: a written scenario reads back equal.

use std::io::Cursor;

use forefield_engine::export::layer_geotiff::{layer_geotiff, layer_grid, STAGE_NODATA};
use forefield_engine::run::scenario::Scenario;
use forefield_engine::run::timeline::PlantQuantity;
use forefield_engine::view::layers::LayerKind;
use tiff::decoder::{Decoder, DecodingResult};
use tiff::tags::Tag;

use crate::export_fixture::{export_run, sample_bytes};

struct Tiff {
    size: (u32, u32),
    scale: Vec<f64>,
    tiepoint: Vec<f64>,
    geokeys: Vec<u16>,
    description: Option<String>,
    data: DecodingResult,
}

fn decode(bytes: &[u8]) -> Tiff {
    let mut decoder = Decoder::new(Cursor::new(bytes)).unwrap();
    let size = decoder.dimensions().unwrap();
    let scale = decoder.get_tag_f64_vec(Tag::Unknown(33550)).unwrap();
    let tiepoint = decoder.get_tag_f64_vec(Tag::Unknown(33922)).unwrap();
    let geokeys: Vec<u16> = decoder
        .get_tag_u32_vec(Tag::Unknown(34735))
        .unwrap()
        .into_iter()
        .map(|v| v as u16)
        .collect();
    let description = decoder.get_tag_ascii_string(Tag::ImageDescription).ok();
    let data = decoder.read_image().unwrap();
    Tiff {
        size,
        scale,
        tiepoint,
        geokeys,
        description,
        data,
    }
}

/// Value of a GeoKey stored in the directory itself (location 0).
fn geokey(keys: &[u16], id: u16) -> Option<u16> {
    keys[4..]
        .chunks_exact(4)
        .find(|k| k[0] == id && k[1] == 0)
        .map(|k| k[3])
}

#[test]
fn layers_are_georeferenced_like_the_dem_and_hold_the_timeline_values() {
    let run = export_run();
    let (timeline, dem) = (&run.timeline, &run.dem);
    let input = decode(&sample_bytes("valley_dem.tif"));
    let year = timeline.last_year();
    for kind in [
        LayerKind::IceThickness,
        LayerKind::ExposureYear,
        LayerKind::Stage,
        LayerKind::Cover(0),
        LayerKind::Soil,
        LayerKind::Domain,
    ] {
        let out = decode(&layer_geotiff(timeline, dem, &run.meta, kind, year).unwrap());
        // TIFF 6.0 ImageDescription (270) carries what the file is and the caution.
        let description = out.description.clone().unwrap_or_default();
        assert!(
            description.contains(&format!("end of {year}")),
            "{description}"
        );
        // The run's ELA and how it was set (TIFF ASCII, so non-ASCII becomes spaces).
        assert!(
            description.contains("ELA ") && description.contains("in the start year ("),
            "{description}"
        );
        assert!(
            description.contains("planning-level scenarios"),
            "{description}"
        );
        assert_eq!(out.size, input.size, "{kind:?}");
        assert_eq!(out.scale[..2], input.scale[..2], "{kind:?}");
        assert_eq!(out.tiepoint[3..5], input.tiepoint[3..5], "{kind:?}");
        // ProjectedCRSGeoKey (3072): EPSG:32626 as in the input.
        assert_eq!(geokey(&out.geokeys, 3072), geokey(&input.geokeys, 3072));
        assert_eq!(geokey(&out.geokeys, 3072), Some(32626));
        let grid = layer_grid(timeline, dem, kind, year).unwrap();
        match (&out.data, kind) {
            (DecodingResult::U8(values), LayerKind::Stage) => {
                let mut stage = Vec::new();
                timeline.fill_stage(year, &mut stage);
                for (idx, &v) in values.iter().enumerate() {
                    if dem.nodata[idx] {
                        assert_eq!(f64::from(v), STAGE_NODATA);
                    } else {
                        assert_eq!(v, stage[idx]);
                    }
                }
            }
            (DecodingResult::U8(values), LayerKind::Domain) => {
                let domain = &timeline.run_start().expect("recorded start").domain;
                for (idx, &v) in values.iter().enumerate() {
                    if !dem.nodata[idx] {
                        assert_eq!(v, u8::from(domain[idx]), "domain {idx}");
                    }
                }
                assert!(values.contains(&1) && values.contains(&0));
            }
            (DecodingResult::F32(values), _) => {
                for (idx, &v) in values.iter().enumerate().step_by(37) {
                    if grid.nodata[idx] {
                        continue;
                    }
                    let expected = match kind {
                        LayerKind::IceThickness => timeline.ice_thickness_at(idx, year),
                        LayerKind::ExposureYear => match timeline.cover_at(idx, year) {
                            (false, Some(y)) => y as f32,
                            _ => -1.0,
                        },
                        LayerKind::Cover(t) => {
                            100.0
                                * timeline
                                    .plant_value_at(idx, year, PlantQuantity::Cover(t))
                                    .unwrap()
                        }
                        _ => timeline
                            .plant_value_at(idx, year, PlantQuantity::Soil)
                            .unwrap(),
                    };
                    assert!(
                        (v - expected).abs() <= 1e-3 * expected.abs().max(1.0),
                        "{kind:?} {idx}"
                    );
                }
            }
            (other, _) => panic!(
                "{kind:?}: unexpected sample type {:?}",
                std::mem::discriminant(other)
            ),
        }
    }
}

#[test]
fn a_written_scenario_reads_back_equal() {
    let run = export_run();
    let again = Scenario::from_json(&run.scenario.to_json()).unwrap();
    assert_eq!(again, run.scenario);
    let default = Scenario::default();
    assert_eq!(Scenario::from_json(&default.to_json()).unwrap(), default);
}
