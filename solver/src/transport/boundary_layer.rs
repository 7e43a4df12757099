//! Resolution guard for the concentration boundary layers at the cell surfaces. Where the cell Péclet number
//! `|Q| / (D h)` of the faces beside a cell surface exceeds 2, those faces carry the fitted flux
//! (`advection`), whose cross-stream numerical diffusion (about `|u| h / 2` where the flow is oblique to the
//! grid) thickens the boundary layer, while a layer thinner than a spacing is under-sampled by the surface
//! closure: uptake and surface values are off, in either direction, more so the higher the cell Péclet number.

/// Cell Péclet number at the cell surfaces above which the boundary layers count as unresolved.
pub const SURFACE_PECLET_LIMIT: f64 = 2.0;

/// Error model `|e| ≈ C (Pe_h − 2)^p` of the bound rate, `Pe_h` the surface cell Péclet number: an envelope of
/// the absorbing-sphere study (`validation::cases::sherwood_sphere`: Stokes flow, Pe = Ud/D = 100…1000, a/h =
/// 4…8, surface Pe_h = 1.2…42, errors −28 % … +10 % against the thin-boundary-layer Sherwood number with its
/// next term, corrected for the box's wall shear). Beyond Pe_h ≈ 42 it is an extrapolation.
pub const UPTAKE_ERROR_MODEL: (f64, f64) = (0.03, 0.6);

/// The boundary layers at the cells are not resolved.
#[derive(Clone, Debug, PartialEq)]
pub struct BoundaryLayerWarning {
    /// Largest cell Péclet number on the faces beside a cell surface.
    pub surface_peclet: f64,
    /// Grid spacing h (m).
    pub spacing: f64,
    /// Expected relative error of bound rates and surface values, from [`UPTAKE_ERROR_MODEL`].
    pub expected_error: f64,
    /// The spacing that brings the surface cell Péclet number to 2 (m).
    pub suggested_spacing: f64,
}

impl std::fmt::Display for BoundaryLayerWarning {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "the cell Peclet number U h/D at the cell surfaces reaches {:.1} (h = {:.3e} m; above {SURFACE_PECLET_LIMIT} \
             the concentration boundary layers at the cells are not resolved and advection there is first order across \
             the stream): expect bound rates and surface values off by about {:.0}% (absorbing-sphere study); \
             a spacing of {:.3e} m resolves them",
            self.surface_peclet,
            self.spacing,
            100.0 * self.expected_error,
            self.suggested_spacing
        )
    }
}

/// Expected relative error of the uptake at surface cell Péclet number `surface_peclet`.
pub fn expected_uptake_error(surface_peclet: f64) -> f64 {
    let (c, p) = UPTAKE_ERROR_MODEL;
    c * (surface_peclet - SURFACE_PECLET_LIMIT).max(0.0).powf(p)
}

/// The warning, if the surface cell Péclet number at spacing `h` exceeds [`SURFACE_PECLET_LIMIT`].
pub fn check_boundary_layer(surface_peclet: f64, spacing: f64) -> Option<BoundaryLayerWarning> {
    (surface_peclet > SURFACE_PECLET_LIMIT).then(|| BoundaryLayerWarning {
        surface_peclet,
        spacing,
        expected_error: expected_uptake_error(surface_peclet),
        suggested_spacing: spacing * SURFACE_PECLET_LIMIT / surface_peclet,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn guard_fires_above_the_central_limit_only() {
        assert!(check_boundary_layer(2.0, 1e-6).is_none());
        let w = check_boundary_layer(20.0, 1e-6).expect("unresolved");
        assert!((w.suggested_spacing - 1e-7).abs() < 1e-20);
        assert!(w.expected_error > expected_uptake_error(5.0) && w.expected_error > 0.0);
        assert!(w.to_string().contains("20.0"));
    }
}
