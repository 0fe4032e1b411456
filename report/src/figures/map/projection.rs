//! The map's projection and generalisation: the spherical Lambert azimuthal equal-area
//! projection (Snyder 1987, USGS Professional Paper 1395, §24, equations 24-2, 22-4 and 22-5
//! forward, 20-14, 20-15 and 24-16 inverse), its centre, and the grid that generalises
//! positions in the projected plane.

/// Radius in km of the sphere the map projects from: the authalic radius of the GRS 80
/// ellipsoid, the radius of the sphere with the same surface area (Moritz 2000, *Journal of
/// Geodesy* 74:128–133, R₂ = 6 371 007.1810 m). WGS 84 differs from GRS 80 by less than a
/// millimetre in this radius.
pub const EARTH_RADIUS_KM: f64 = 6371.0072;

/// The spherical Lambert azimuthal equal-area projection about a centre (φ₁, λ₀), in the units
/// of the radius. Areas are true everywhere; distances from the centre are true to within
/// 0.1 % up to about 500 km from it (scale along a radius cos(c/2), c the angular distance).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LambertAzimuthal {
    /// Latitude of the centre, degrees.
    pub centre_latitude: f64,
    /// Longitude of the centre, degrees.
    pub centre_longitude: f64,
    /// Radius of the sphere (km for the map: [`EARTH_RADIUS_KM`]).
    pub radius: f64,
}

impl LambertAzimuthal {
    /// The projection about (`centre_latitude`, `centre_longitude`) in degrees on the sphere of
    /// the given radius.
    pub fn new(centre_latitude: f64, centre_longitude: f64, radius: f64) -> LambertAzimuthal {
        LambertAzimuthal { centre_latitude, centre_longitude, radius }
    }

    /// The projected (x, y) of a position in degrees, x east and y north of the centre;
    /// `None` for the antipode of the centre, which has no single image.
    pub fn forward(&self, latitude: f64, longitude: f64) -> Option<(f64, f64)> {
        let (phi1, phi) = (self.centre_latitude.to_radians(), latitude.to_radians());
        let dlambda = (longitude - self.centre_longitude).to_radians();
        let denominator = 1.0 + phi1.sin() * phi.sin() + phi1.cos() * phi.cos() * dlambda.cos();
        if denominator <= 1e-12 {
            return None;
        }
        // Snyder (1987) equation 24-2.
        let k = (2.0 / denominator).sqrt();
        // Equations 22-4 and 22-5.
        let x = self.radius * k * phi.cos() * dlambda.sin();
        let y = self.radius * k * (phi1.cos() * phi.sin() - phi1.sin() * phi.cos() * dlambda.cos());
        Some((x, y))
    }

    /// The position in degrees (latitude, longitude in −180…180) of a projected point; `None`
    /// outside the disc of radius 2R that the whole sphere projects into.
    pub fn inverse(&self, x: f64, y: f64) -> Option<(f64, f64)> {
        let rho = x.hypot(y);
        if rho > 2.0 * self.radius {
            return None;
        }
        if rho == 0.0 {
            return Some((self.centre_latitude, self.centre_longitude));
        }
        let phi1 = self.centre_latitude.to_radians();
        // Equations 24-16, 20-14 and 20-15.
        let c = 2.0 * (rho / (2.0 * self.radius)).asin();
        let latitude = (c.cos() * phi1.sin() + y * c.sin() * phi1.cos() / rho).clamp(-1.0, 1.0).asin();
        let dlambda = (x * c.sin()).atan2(rho * phi1.cos() * c.cos() - y * phi1.sin() * c.sin());
        Some((latitude.to_degrees(), wrap_longitude(self.centre_longitude + dlambda.to_degrees())))
    }
}

/// A longitude brought into −180…180.
pub fn wrap_longitude(longitude: f64) -> f64 {
    let wrapped = (longitude + 180.0).rem_euclid(360.0) - 180.0;
    if wrapped == -180.0 && longitude > 0.0 { 180.0 } else { wrapped }
}

/// The centre of the positions' extent, rounded to whole degrees: the middle of the range of
/// latitudes and of the shortest arc of longitudes that holds every position (so a set of
/// positions either side of 180° is centred near it, not on the other side of the Earth).
///
/// Rounding keeps the centre, which the map states, from revealing a position: the centre of
/// one site's extent is the site itself. A centre up to half a degree off the middle changes
/// scale by less than one part in 10⁴ over the map (scale along a radius cos(c/2)).
pub fn extent_centre(positions: &[(f64, f64)]) -> (f64, f64) {
    let latitudes = positions.iter().map(|p| p.0);
    let low = latitudes.clone().fold(f64::INFINITY, f64::min);
    let high = latitudes.fold(f64::NEG_INFINITY, f64::max);
    let latitude = if low.is_finite() { ((low + high) / 2.0).round().clamp(-90.0, 90.0) } else { 0.0 };
    let mut longitudes: Vec<f64> = positions.iter().map(|p| wrap_longitude(p.1)).collect();
    longitudes.sort_by(f64::total_cmp);
    let longitude = match (longitudes.first(), longitudes.last()) {
        (Some(&first), Some(&last)) => {
            // The largest gap between neighbours on the circle lies outside the extent.
            let (mut gap, mut start) = (first + 360.0 - last, first);
            for pair in longitudes.windows(2) {
                if pair[1] - pair[0] > gap {
                    (gap, start) = (pair[1] - pair[0], pair[1]);
                }
            }
            let span = 360.0 - gap;
            wrap_longitude((start + span / 2.0).round())
        }
        _ => 0.0,
    };
    // Adding 0 turns a rounded −0 into 0, so that the centre never prints as "−0°".
    (latitude + 0.0, longitude + 0.0)
}

/// The centre of the cell of a square grid `cell` wide (cells aligned with the axes, one
/// corner at the projection's centre) that holds (x, y).
pub fn snap_to_grid(x: f64, y: f64, cell: f64) -> (f64, f64) {
    let centre = |v: f64| ((v / cell).floor() + 0.5) * cell;
    (centre(x), centre(y))
}
