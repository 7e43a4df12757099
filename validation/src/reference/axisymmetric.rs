//! Cartesian form of the axisymmetric flows past a sphere (items B and E of shared/REFERENCES.md).
//!
//! Every sphere flow there has the form `u_r = U g(r) cosθ`, `u_θ = −U k(r) sinθ`, with θ measured from the
//! stream direction (downstream pole θ = 0). With `θ̂ = (cosθ r̂ − ê)/sinθ` for the stream direction ê this is
//! `u = U [(g − k) cosθ r̂ + k ê]`, regular on the axis (common practice).

/// Velocity (m/s) at `point` (m) of the flow `u_r = U g cosθ`, `u_θ = −U k sinθ` about a sphere centred at
/// `centre` (m) in a stream of speed `speed` (m/s) along +x; `radial(r)` returns `(g, k)` at distance r (m).
pub(crate) fn velocity_along_x<F: Fn(f64) -> (f64, f64)>(
    point: [f64; 3],
    centre: [f64; 3],
    speed: f64,
    radial: F,
) -> [f64; 3] {
    let d = [point[0] - centre[0], point[1] - centre[1], point[2] - centre[2]];
    let r = (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt();
    let (g, k) = radial(r);
    let cos_theta = d[0] / r;
    let along_radius = speed * (g - k) * cos_theta / r;
    [along_radius * d[0] + speed * k, along_radius * d[1], along_radius * d[2]]
}
