//! Bulk decay `k c` over the fluid part of each grid cell: a diagonal sink `k · φ_P · h³`.

use mesh::EmbeddedGeometry;

/// Decay sink per grid cell (m^3/s).
pub fn decay_sink(geometry: &EmbeddedGeometry, decay_rate: f64) -> Vec<f64> {
    let volume = geometry.grid.cell_volume();
    geometry.volume_fraction.iter().map(|&phi| decay_rate * phi * volume).collect()
}
