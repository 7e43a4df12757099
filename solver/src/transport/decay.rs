//! Bulk decay `k c` over the fluid part of each grid cell: a diagonal sink `k · φ_P · h³`.

use mesh::EmbeddedGeometry;

/// Decay sink per grid cell (m^3/s).
pub fn decay_sink(geometry: &EmbeddedGeometry, decay_rate: f64) -> Vec<f64> {
    decay_sinks(geometry, decay_rate).collect()
}

/// The same sinks one by one, for whoever needs them once (the mass balance) and need not store them.
pub fn decay_sinks(geometry: &EmbeddedGeometry, decay_rate: f64) -> impl Iterator<Item = f64> + '_ {
    let volume = geometry.grid.cell_volume();
    geometry.volume_fraction.iter().map(move |&phi| decay_rate * phi * volume)
}
