//! Reference checks of the engine against published solutions and independent references.

mod export_csv;
mod export_fixture;
mod export_geojson;
mod export_geotiff;
mod export_png;
mod geotiff_read;
mod ice_conservation;
mod ice_downscale;
mod ice_halfar;
mod ice_mass_balance;
mod ice_outline;
mod ice_real_terrain;
mod ice_response;
mod ice_steep_snow;
mod lakes_priority_flood;
mod outline_mask;
mod terrain_horn;
mod veg_chronosequence;
mod veg_kernels;
mod veg_migration;
mod veg_model;
mod veg_scenario_disturbance;
mod veg_spread;
mod veg_volcanic_pulse;
mod zone_timeline;
