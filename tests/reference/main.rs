//! Reference checks of the engine against published solutions and independent references.

mod geotiff_read;
mod ice_halfar;
mod terrain_horn;
