//! The product's estimate formulas (`solver::post::estimates`) against the independent reference
//! implementations in `validation::reference` (shared/REFERENCES.md items E and G, [derived] there and verified
//! by ODE/PDE solves): the two are written separately, so agreement checks both.

use solver::post::estimates::{
    homogenised_source_and_sink, isolated_anisotropy, ColumnInlet, IsolatedFlow, MeanFieldColumn,
};
use solver::problem::SurfaceUptake;
use validation::reference::low_peclet::{anisotropy_per_peclet_with_decay, Flow};
use validation::reference::mean_field;

#[test]
fn isolated_anisotropy_matches_low_peclet_reference_for_every_flow() {
    // REFERENCES.md E.3/E.6: A/Pe = J_β/(3[2 + 2β + β² + Bi(1 + β)]); Brinkman J_β by quadrature in both.
    let flows = [
        (IsolatedFlow::Darcy, Flow::Darcy),
        (IsolatedFlow::Stokes, Flow::Stokes),
        (IsolatedFlow::Brinkman { alpha: 0.3 }, Flow::Brinkman { alpha: 0.3 }),
        (IsolatedFlow::Brinkman { alpha: 1.0 }, Flow::Brinkman { alpha: 1.0 }),
        (IsolatedFlow::Brinkman { alpha: 3.0 }, Flow::Brinkman { alpha: 3.0 }),
        (IsolatedFlow::Brinkman { alpha: 30.0 }, Flow::Brinkman { alpha: 30.0 }),
    ];
    for (ours, reference) in flows {
        for biot in [0.0, 1.0, 7.5] {
            for beta in [0.0, 0.5, 2.0] {
                let got = isolated_anisotropy(ours, 1.0, biot, beta);
                let want = anisotropy_per_peclet_with_decay(reference, biot, beta).unwrap();
                assert!(
                    ((got - want) / want).abs() < 1e-9,
                    "{ours:?}, Bi = {biot}, β = {beta}: ours {got:.12e} vs reference {want:.12e}"
                );
            }
        }
    }
}

#[test]
fn meanfield_column_matches_reference_column_and_homogenisation() {
    // REFERENCES.md G: the Danckwerts column of both implementations, with and without sink and dispersion.
    for (dispersion, sink) in [(0.0, 0.0), (0.0, 0.3), (0.2, 0.0), (0.02, 1.5), (1e-3, 0.7)] {
        let ours = MeanFieldColumn {
            length: 1.0,
            speed: 1.0,
            dispersion,
            sink_rate: sink,
            source_density: 1.0,
            inlet_concentration: 0.25,
            inlet: ColumnInlet::Danckwerts,
        };
        let reference = mean_field::MeanFieldColumn::new(1.0, 1.0, dispersion, sink, 1.0, 0.25).unwrap();
        for x in [0.0, 0.1, 0.5, 0.9, 1.0] {
            let (a, b) = (ours.concentration(x), reference.concentration(x));
            assert!(
                (a - b).abs() < 1e-12 * b.abs().max(1.0),
                "D = {dispersion}, k = {sink}, x = {x}: {a} vs {b}"
            );
        }
    }
    // Homogenised Robin cells: S = ρν/(1 + Bi), k_eff = ρ 4πDa Bi/(1 + Bi) + φ k.
    let (s, k) = homogenised_source_and_sink(
        1e11,
        10.0,
        5e-6,
        1e-10,
        2e-4,
        SurfaceUptake::FirstOrder { rate_constant: 3e-6 },
        0.9,
    );
    let reference = mean_field::homogenised_cells(1e11, 10.0, 5e-6, 1e-10, 3e-6, 0.9, 2e-4).unwrap();
    assert!((s / reference.source_density - 1.0).abs() < 1e-14);
    assert!((k / reference.sink_rate - 1.0).abs() < 1e-14);
}
