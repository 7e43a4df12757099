//! Diffusion `−∇·(D∇c)`: the flux through a face is `D · (open area) · (c_P − c_N)/h`, a two-point flux between
//! cell centres weighted by the face aperture (common practice for embedded-boundary finite volumes).

use mesh::{Axis, EmbeddedGeometry};

/// Diffusive conductance `D · aperture · h` (m^3/s) of every face.
pub fn diffusive_conductance(geometry: &EmbeddedGeometry, diffusivity: f64) -> [Vec<f64>; 3] {
    let h = geometry.grid.spacing;
    Axis::ALL
        .map(|axis| geometry.aperture[axis.index()].iter().map(|&alpha| diffusivity * alpha * h).collect())
}
