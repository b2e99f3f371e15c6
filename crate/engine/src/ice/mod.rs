//! The ice physics: climate, mass balance and its calibration, 2-D flow, thickness from an outline, the glacier domain, snow leaving steep ground and exposure years.

pub mod climate;
pub mod ela_calibration;
pub mod exposure;
pub mod flow;
pub mod glacier_domain;
pub mod mass_balance;
pub mod outline_thickness;
pub mod snow_redistribution;
