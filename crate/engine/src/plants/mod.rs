//! The plant model: functional types, dispersal, establishment, soil, succession, disturbances
//! and the yearly colonisation step.

pub mod cell_update;
pub mod chunks;
pub mod dispersal;
pub mod disturbance;
pub mod draws;
pub mod error;
pub mod establishment;
pub mod kernels;
pub mod pft;
pub mod seed_rain;
pub mod soil;
pub mod succession;
pub mod vegetation;

/// Stage codes of the existing-vegetation grid (the succession stages of the model).
pub mod vegetation_code {
    pub const ICE: u8 = 0;
    pub const BARE: u8 = 1;
    pub const PIONEER: u8 = 2;
    pub const MEADOW: u8 = 3;
    pub const SHRUBLAND: u8 = 4;
    pub const YOUNG_FOREST: u8 = 5;
    pub const MATURE_FOREST: u8 = 6;
}
