//! Universal Transverse Mercator grid coordinates to geographic longitude and latitude and
//! back, by Krüger's series in the third flattening n, truncated at n^3 (Krüger 1912; Karney 2011,
//! *J. Geodesy* 85:475-485; the coefficients are written from memory of the usual UTM
//! inversion and checked against an independent projection library in the reference tests).
//! Within a zone the truncation error is well under a millimetre, far below the 1e-7 degree
//! (about 1 cm) to which exports round.
//!
//! Trigonometry goes through `libm` so the page and the command line give the same digits.

/// An ellipsoid: semi-major axis (m) and flattening.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Ellipsoid {
    pub a_m: f64,
    pub f: f64,
}

/// WGS 84 (NIMA TR8350.2).
pub const WGS84: Ellipsoid = Ellipsoid {
    a_m: 6_378_137.0,
    f: 1.0 / 298.257_223_563,
};

/// GRS 80 (Moritz 1980), the ellipsoid of ETRS89.
pub const GRS80: Ellipsoid = Ellipsoid {
    a_m: 6_378_137.0,
    f: 1.0 / 298.257_222_101,
};

/// A UTM zone: number 1-60, hemisphere and ellipsoid.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct UtmZone {
    pub zone: u8,
    pub north: bool,
    pub ellipsoid: Ellipsoid,
    /// Datum named in outputs.
    pub datum: &'static str,
}

impl UtmZone {
    /// The zone of an EPSG code this module converts: WGS 84 / UTM north (32601-32660) and
    /// south (32701-32760), ETRS89 / UTM (25828-25838; ETRS89 and WGS 84 differ by well under
    /// a metre, which the conversion ignores). Other codes are `None`.
    pub fn from_epsg(epsg: u32) -> Option<UtmZone> {
        let zone = |z: u32, north, ellipsoid, datum| {
            Some(UtmZone {
                zone: z as u8,
                north,
                ellipsoid,
                datum,
            })
        };
        match epsg {
            32601..=32660 => zone(epsg - 32600, true, WGS84, "WGS 84"),
            32701..=32760 => zone(epsg - 32700, false, WGS84, "WGS 84"),
            25828..=25838 => zone(epsg - 25800, true, GRS80, "ETRS89"),
            _ => None,
        }
    }

    /// Longitude of the central meridian, degrees.
    pub fn central_meridian_deg(&self) -> f64 {
        f64::from(self.zone) * 6.0 - 183.0
    }

    /// Longitude and latitude (degrees) of a point given in this zone's easting and northing
    /// (m).
    pub fn to_lon_lat(&self, easting_m: f64, northing_m: f64) -> (f64, f64) {
        const K0: f64 = 0.9996;
        const FALSE_EASTING_M: f64 = 500_000.0;
        let false_northing_m = if self.north { 0.0 } else { 10_000_000.0 };
        let f = self.ellipsoid.f;
        let n = f / (2.0 - f);
        let (n2, n3) = (n * n, n * n * n);
        // Rectifying radius.
        let big_a = self.ellipsoid.a_m / (1.0 + n) * (1.0 + n2 / 4.0 + n2 * n2 / 64.0);
        let beta = [
            n / 2.0 - 2.0 * n2 / 3.0 + 37.0 * n3 / 96.0,
            n2 / 48.0 + n3 / 15.0,
            17.0 * n3 / 480.0,
        ];
        let delta = [
            2.0 * n - 2.0 * n2 / 3.0 - 2.0 * n3,
            7.0 * n2 / 3.0 - 8.0 * n3 / 5.0,
            56.0 * n3 / 15.0,
        ];
        let xi = (northing_m - false_northing_m) / (K0 * big_a);
        let eta = (easting_m - FALSE_EASTING_M) / (K0 * big_a);
        let (mut xi_p, mut eta_p) = (xi, eta);
        for (j, b) in beta.iter().enumerate() {
            let k = 2.0 * (j as f64 + 1.0);
            xi_p -= b * libm::sin(k * xi) * libm::cosh(k * eta);
            eta_p -= b * libm::cos(k * xi) * libm::sinh(k * eta);
        }
        let chi = libm::asin(libm::sin(xi_p) / libm::cosh(eta_p));
        let mut phi = chi;
        for (j, d) in delta.iter().enumerate() {
            phi += d * libm::sin(2.0 * (j as f64 + 1.0) * chi);
        }
        let lambda = libm::atan2(libm::sinh(eta_p), libm::cos(xi_p));
        (
            self.central_meridian_deg() + lambda.to_degrees(),
            phi.to_degrees(),
        )
    }
}

impl UtmZone {
    /// Easting and northing (m) in this zone of a point given by longitude and latitude
    /// (degrees): the forward series of the same truncation.
    pub fn to_easting_northing(&self, lon_deg: f64, lat_deg: f64) -> (f64, f64) {
        const K0: f64 = 0.9996;
        const FALSE_EASTING_M: f64 = 500_000.0;
        let false_northing_m = if self.north { 0.0 } else { 10_000_000.0 };
        let f = self.ellipsoid.f;
        let n = f / (2.0 - f);
        let (n2, n3) = (n * n, n * n * n);
        let big_a = self.ellipsoid.a_m / (1.0 + n) * (1.0 + n2 / 4.0 + n2 * n2 / 64.0);
        let alpha = [
            n / 2.0 - 2.0 * n2 / 3.0 + 5.0 * n3 / 16.0,
            13.0 * n2 / 48.0 - 3.0 * n3 / 5.0,
            61.0 * n3 / 240.0,
        ];
        // First eccentricity, 2 sqrt(n) / (1 + n).
        let e = 2.0 * n.sqrt() / (1.0 + n);
        let phi = lat_deg.to_radians();
        let lambda = (lon_deg - self.central_meridian_deg()).to_radians();
        let sin_phi = libm::sin(phi);
        let t = libm::sinh(libm::atanh(sin_phi) - e * libm::atanh(e * sin_phi));
        let xi_p = libm::atan2(t, libm::cos(lambda));
        let eta_p = libm::atanh(libm::sin(lambda) / (1.0 + t * t).sqrt());
        let (mut xi, mut eta) = (xi_p, eta_p);
        for (j, a) in alpha.iter().enumerate() {
            let k = 2.0 * (j as f64 + 1.0);
            xi += a * libm::sin(k * xi_p) * libm::cosh(k * eta_p);
            eta += a * libm::cos(k * xi_p) * libm::sinh(k * eta_p);
        }
        (
            FALSE_EASTING_M + K0 * big_a * eta,
            false_northing_m + K0 * big_a * xi,
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn central_meridian_on_the_equator_maps_to_itself() {
        let zone = UtmZone::from_epsg(32632).unwrap();
        let (lon, lat) = zone.to_lon_lat(500_000.0, 0.0);
        assert!((lon - 9.0).abs() < 1e-12 && lat.abs() < 1e-12);
        let south = UtmZone::from_epsg(32726).unwrap();
        let (lon, lat) = south.to_lon_lat(500_000.0, 10_000_000.0);
        assert!((lon + 27.0).abs() < 1e-12 && lat.abs() < 1e-12);
        assert!(UtmZone::from_epsg(2056).is_none());
    }

    #[test]
    fn forward_and_inverse_round_trip_to_a_millimetre() {
        let zone = UtmZone::from_epsg(32617).unwrap();
        for (lon, lat) in [(-81.0, 0.0), (-84.2, 36.7), (-78.1, 64.0), (-83.5, -12.0)] {
            let (e, n) = zone.to_easting_northing(lon, lat);
            let (lon2, lat2) = zone.to_lon_lat(e, n);
            let (e2, n2) = zone.to_easting_northing(lon2, lat2);
            assert!(
                (e - e2).abs() < 1e-3 && (n - n2).abs() < 1e-3,
                "{lon} {lat}"
            );
        }
        assert_eq!(zone.to_easting_northing(-81.0, 0.0), (500_000.0, 0.0));
    }
}
