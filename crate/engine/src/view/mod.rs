//! What a year of a run looks like: layers and their colours, lakes, steep bare ground.

pub mod lakes;
pub mod layers;
pub mod render;
pub mod steep_ground;
