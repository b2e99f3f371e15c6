//! Readers and writers of the planner's files: GeoTIFF, PNG height maps, GeoJSON outlines (with their UTM conversion) and grid alignment.

pub mod align;
pub mod geotiff;
pub mod heightmap_png;
pub mod outline;
pub mod utm;
