/// Speed of light in vacuum, m/s (exact by the SI definition of the metre).
pub const SPEED_OF_LIGHT_M_PER_S: f64 = 299_792_458.0;
