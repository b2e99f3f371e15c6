//! Climate forcing: a yearly temperature anomaly from a linear warming trend, a piecewise-linear
//! table, volcanic cooling pulses (exponential recovery) and a sinusoidal solar-variability term.
//!
//! The anomaly is the sum of the four parts, each zero unless configured:
//!
//! ```text
//! dT(y) = trend(y) + table(y) + sum_k pulse_k(y) + solar(y)
//! trend(y)   = rate / 10 * max(0, y - warming_start_year)
//! table(y)   = linear interpolation of (year, anomaly), held constant beyond its ends
//! pulse_k(y) = -peak_k * exp(-(y - year_k) / decay_k)          for y >= year_k, else 0
//! solar(y)   = amplitude * cos(2 pi (y - solar_max_year) / 11)
//! ```
//!
//! A volcanic pulse has two parameters, a peak cooling and an e-folding recovery time. About
//! 0.5 K of peak cooling after a large tropical eruption is from Hansen et al. (1992), GRL
//! 19(2):215-218 (from memory); the exponential recovery is common practice, no source, and the
//! e-folding time is the scenario's choice.
//!
//! The solar term is a plain sinusoid standing for solar variability. Its period of about 11
//! years is that of the solar activity cycle (Hathaway 2015, "The Solar Cycle", Living Rev.
//! Sol. Phys. 12:4); its amplitude is the scenario's choice, with no published value behind
//! it, and it is off by default.
//!
//! Everything is a pure function of the year: no clock, no random numbers.

use serde::{Deserialize, Serialize};

use crate::params::{check_range, ScenarioError};

/// Period of the solar-variability term, years: the solar activity cycle of about 11 years
/// (Hathaway 2015, Living Rev. Sol. Phys. 12:4).
pub const SOLAR_CYCLE_YEARS: f64 = 11.0;

/// One point of a user anomaly table.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AnomalyPoint {
    /// Calendar year (may be fractional), -10000 to 10000.
    pub year: f64,
    /// Temperature anomaly at that year, degrees C, -15 to 15.
    pub anomaly_c: f64,
}

/// A cooling pulse after a large volcanic eruption.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct VolcanicPulse {
    /// Year the cooling starts (full strength in that year).
    pub year: f64,
    /// Peak cooling, K (positive number = colder), 0 to 5. About 0.5 K for a large tropical
    /// eruption (Hansen et al. 1992, GRL 19(2):215-218; from memory).
    pub peak_cooling_k: f64,
    /// E-folding recovery time, years, 0.1 to 50; the scenario's choice (the exponential
    /// recovery is common practice, no source).
    pub decay_years: f64,
}

/// Parameters of the temperature-anomaly trajectory (the `climate` block of a scenario).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct ClimateParams {
    /// Linear warming rate, degrees C per decade, -2 to 2. Default 0.3, a moderate warming
    /// rate for mountain regions (common practice, no source).
    pub warming_c_per_decade: f64,
    /// Year the linear trend starts from zero; `null` means the scenario's start year.
    pub warming_start_year: Option<f64>,
    /// Piecewise-linear anomaly table added to the trend; years strictly increasing; empty by
    /// default.
    pub anomaly_table: Vec<AnomalyPoint>,
    /// Volcanic cooling pulses; empty by default.
    pub volcanic_pulses: Vec<VolcanicPulse>,
    /// Half the peak-to-trough swing of the sinusoidal solar-variability term, K, 0 to 0.5.
    /// The size is the scenario's choice; default 0 (off).
    pub solar_cycle_amplitude_k: f64,
    /// A year when the solar term peaks, used for its phase. Default 2014.
    pub solar_max_year: f64,
}

impl Default for ClimateParams {
    fn default() -> Self {
        ClimateParams {
            warming_c_per_decade: 0.3,
            warming_start_year: None,
            anomaly_table: Vec::new(),
            volcanic_pulses: Vec::new(),
            solar_cycle_amplitude_k: 0.0,
            solar_max_year: 2014.0,
        }
    }
}

impl ClimateParams {
    /// Checks every number against its documented range.
    pub fn validate(&self) -> Result<(), ScenarioError> {
        check_range(
            "climate.warming_c_per_decade",
            self.warming_c_per_decade,
            -2.0,
            2.0,
            "C/decade",
        )?;
        if let Some(year) = self.warming_start_year {
            check_range(
                "climate.warming_start_year",
                year,
                -10000.0,
                10000.0,
                "year",
            )?;
        }
        let mut previous_year = f64::NEG_INFINITY;
        for (i, point) in self.anomaly_table.iter().enumerate() {
            let field = format!("climate.anomaly_table[{i}].year");
            check_range(&field, point.year, -10000.0, 10000.0, "year")?;
            if point.year <= previous_year {
                return Err(ScenarioError::Invalid {
                    field,
                    problem: format!(
                        "years must increase strictly; {} follows {}",
                        point.year, previous_year
                    ),
                });
            }
            previous_year = point.year;
            let field = format!("climate.anomaly_table[{i}].anomaly_c");
            check_range(&field, point.anomaly_c, -15.0, 15.0, "C")?;
        }
        for (i, pulse) in self.volcanic_pulses.iter().enumerate() {
            check_range(
                &format!("climate.volcanic_pulses[{i}].year"),
                pulse.year,
                -10000.0,
                10000.0,
                "year",
            )?;
            check_range(
                &format!("climate.volcanic_pulses[{i}].peak_cooling_k"),
                pulse.peak_cooling_k,
                0.0,
                5.0,
                "K",
            )?;
            check_range(
                &format!("climate.volcanic_pulses[{i}].decay_years"),
                pulse.decay_years,
                0.1,
                50.0,
                "years",
            )?;
        }
        check_range(
            "climate.solar_cycle_amplitude_k",
            self.solar_cycle_amplitude_k,
            0.0,
            0.5,
            "K",
        )?;
        check_range(
            "climate.solar_max_year",
            self.solar_max_year,
            -10000.0,
            10000.0,
            "year",
        )?;
        Ok(())
    }
}

/// A validated anomaly trajectory, evaluated by year.
#[derive(Clone, Debug, PartialEq)]
pub struct ClimateTrajectory {
    params: ClimateParams,
    warming_start_year: f64,
}

impl ClimateTrajectory {
    /// Builds the trajectory; `start_year` is used when the trend start is not given.
    pub fn new(params: &ClimateParams, start_year: f64) -> Result<Self, ScenarioError> {
        params.validate()?;
        Ok(ClimateTrajectory {
            warming_start_year: params.warming_start_year.unwrap_or(start_year),
            params: params.clone(),
        })
    }

    /// Temperature anomaly at `year`, degrees C.
    pub fn anomaly_c(&self, year: f64) -> f64 {
        let p = &self.params;
        let trend = p.warming_c_per_decade / 10.0 * (year - self.warming_start_year).max(0.0);
        let pulses: f64 = p
            .volcanic_pulses
            .iter()
            .filter(|pulse| year >= pulse.year)
            .map(|pulse| {
                -pulse.peak_cooling_k * libm::exp(-(year - pulse.year) / pulse.decay_years)
            })
            .sum();
        let phase = 2.0 * std::f64::consts::PI * (year - p.solar_max_year) / SOLAR_CYCLE_YEARS;
        let solar = p.solar_cycle_amplitude_k * libm::cos(phase);
        trend + table_value(&p.anomaly_table, year) + pulses + solar
    }
}

/// Linear interpolation in a table sorted by year, constant beyond its ends, zero when empty.
fn table_value(table: &[AnomalyPoint], year: f64) -> f64 {
    let (Some(first), Some(last)) = (table.first(), table.last()) else {
        return 0.0;
    };
    if year <= first.year {
        return first.anomaly_c;
    }
    if year >= last.year {
        return last.anomaly_c;
    }
    // The first point after `year` exists because year < last.year.
    let upper = table.partition_point(|p| p.year <= year);
    let (a, b) = (table[upper - 1], table[upper]);
    a.anomaly_c + (b.anomaly_c - a.anomaly_c) * (year - a.year) / (b.year - a.year)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn trajectory(params: ClimateParams) -> ClimateTrajectory {
        ClimateTrajectory::new(&params, 2000.0).expect("valid parameters")
    }

    #[test]
    fn linear_trend_starts_at_the_start_year() {
        let t = trajectory(ClimateParams {
            warming_c_per_decade: 0.4,
            ..Default::default()
        });
        assert_eq!(t.anomaly_c(1990.0), 0.0);
        assert!((t.anomaly_c(2050.0) - 2.0).abs() < 1e-12);
    }

    #[test]
    fn table_interpolates_and_holds_its_ends() {
        let table = vec![
            AnomalyPoint {
                year: 2000.0,
                anomaly_c: 0.0,
            },
            AnomalyPoint {
                year: 2050.0,
                anomaly_c: 2.0,
            },
            AnomalyPoint {
                year: 2100.0,
                anomaly_c: 1.0,
            },
        ];
        let t = trajectory(ClimateParams {
            warming_c_per_decade: 0.0,
            anomaly_table: table,
            ..Default::default()
        });
        assert_eq!(t.anomaly_c(1900.0), 0.0);
        assert!((t.anomaly_c(2025.0) - 1.0).abs() < 1e-12);
        assert!((t.anomaly_c(2075.0) - 1.5).abs() < 1e-12);
        assert_eq!(t.anomaly_c(2200.0), 1.0);
    }

    #[test]
    fn volcanic_pulse_cools_then_recovers() {
        let t = trajectory(ClimateParams {
            warming_c_per_decade: 0.0,
            volcanic_pulses: vec![VolcanicPulse {
                year: 2010.0,
                peak_cooling_k: 0.5,
                decay_years: 1.0,
            }],
            ..Default::default()
        });
        assert_eq!(t.anomaly_c(2009.0), 0.0);
        assert!((t.anomaly_c(2010.0) + 0.5).abs() < 1e-12);
        assert!((t.anomaly_c(2011.0) + 0.5 / std::f64::consts::E).abs() < 1e-12);
        assert!(t.anomaly_c(2020.0).abs() < 1e-4);
    }

    #[test]
    fn solar_cycle_repeats_every_eleven_years() {
        let t = trajectory(ClimateParams {
            warming_c_per_decade: 0.0,
            solar_cycle_amplitude_k: 0.05,
            ..Default::default()
        });
        assert!((t.anomaly_c(2014.0) - 0.05).abs() < 1e-12);
        assert!((t.anomaly_c(2019.5) + 0.05).abs() < 1e-12);
        assert!((t.anomaly_c(2031.3) - t.anomaly_c(2042.3)).abs() < 1e-12);
    }

    #[test]
    fn bad_values_name_the_field() {
        let params = ClimateParams {
            volcanic_pulses: vec![VolcanicPulse {
                year: 2010.0,
                peak_cooling_k: 9.0,
                decay_years: 1.0,
            }],
            ..Default::default()
        };
        let err = params.validate().unwrap_err();
        assert!(
            err.to_string()
                .contains("climate.volcanic_pulses[0].peak_cooling_k"),
            "{err}"
        );
        let params = ClimateParams {
            anomaly_table: vec![
                AnomalyPoint {
                    year: 2050.0,
                    anomaly_c: 0.0,
                },
                AnomalyPoint {
                    year: 2050.0,
                    anomaly_c: 1.0,
                },
            ],
            ..Default::default()
        };
        assert!(params
            .validate()
            .unwrap_err()
            .to_string()
            .contains("anomaly_table[1].year"));
    }
}
