//! Verification cases behind `plumefield verify`: the full solver on problems with published analytic answers.
//! Each case states its source, its expected error and, where it refines the grid, the observed order.

pub mod brinkman_darcy_limit;
pub mod brinkman_sphere;
pub mod darcy_sphere;
pub mod decompose_split;
pub mod decompose_split_transient;
pub mod isolated_sphere;
pub mod low_peclet_brinkman;
pub mod low_peclet_darcy;
pub mod mass_balance_dense;
pub mod meanfield_dense;
pub mod setup;
pub mod sherwood_sphere;
pub mod stokes_array;
pub mod transient_puff;
pub mod transient_setup;
pub mod transient_sphere;
pub mod transient_steady_limit;
pub mod two_spheres;

/// A verification case that could not be set up or solved.
#[derive(thiserror::Error, Debug)]
pub enum VerifyError {
    #[error(transparent)]
    Solve(#[from] solver::solve_case::CaseSolveError),
    #[error(transparent)]
    Layout(#[from] mesh::layout::LayoutError),
    #[error(transparent)]
    Reference(#[from] crate::reference::ReferenceError),
    #[error(transparent)]
    Decompose(#[from] solver::post::decompose::DecomposeError),
    #[error("{0}")]
    Transient(String),
}

/// How thorough a verification run is.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Tier {
    /// Coarse grids, a few minutes at most.
    Quick,
    /// Finer grids for the convergence studies.
    Full,
}

/// One line of the verification table.
#[derive(Clone, Debug)]
pub struct Check {
    pub case: String,
    pub quantity: String,
    pub computed: f64,
    pub reference: f64,
    pub relative_error: f64,
    /// Observed order of convergence between the two finest grids, where the case refines the grid.
    pub observed_order: Option<f64>,
    /// Largest relative error (and smallest order, if any) accepted.
    pub tolerance: f64,
    pub minimum_order: Option<f64>,
    pub source: String,
    pub passed: bool,
}

impl Check {
    /// A comparison of `computed` with `reference` within `tolerance` (relative).
    pub fn new(
        case: &str,
        quantity: &str,
        computed: f64,
        reference: f64,
        tolerance: f64,
        source: &str,
    ) -> Self {
        let relative_error = relative_error(computed, reference);
        Check {
            case: case.into(),
            quantity: quantity.into(),
            computed,
            reference,
            relative_error,
            observed_order: None,
            tolerance,
            minimum_order: None,
            source: source.into(),
            passed: relative_error <= tolerance,
        }
    }

    /// Adds an observed order that must reach `minimum`.
    pub fn with_order(mut self, observed: f64, minimum: f64) -> Self {
        self.observed_order = Some(observed);
        self.minimum_order = Some(minimum);
        self.passed = self.passed && observed >= minimum;
        self
    }
}

pub fn relative_error(computed: f64, reference: f64) -> f64 {
    if reference == 0.0 {
        computed.abs()
    } else {
        ((computed - reference) / reference).abs()
    }
}

pub use numkit::observed_order;

/// Runs every verification case; `progress` hears the name of each case as it starts.
pub fn run_all(tier: Tier, progress: &mut dyn FnMut(&str)) -> Result<Vec<Check>, VerifyError> {
    let mut checks = Vec::new();
    progress("isolated sphere, no flow");
    checks.extend(isolated_sphere::run(tier)?);
    progress("Darcy flow past a sphere");
    checks.extend(darcy_sphere::run(tier)?);
    progress("low-Péclet anisotropy in Darcy flow");
    checks.extend(low_peclet_darcy::run(tier)?);
    progress("mass balance, dense random layout");
    checks.extend(mass_balance_dense::run(tier)?);
    progress("mean-field background, dense random layout");
    checks.extend(meanfield_dense::run(tier)?);
    progress("two reflecting spheres, no flow");
    checks.extend(two_spheres::run(tier)?);
    progress("self/neighbour split");
    checks.extend(decompose_split::run(tier)?);
    progress("switched-on sphere in time");
    checks.extend(transient_sphere::run(tier)?);
    progress("Gaussian puff in a periodic box");
    checks.extend(transient_puff::run(tier)?);
    progress("long-time limit of a transient run");
    checks.extend(transient_steady_limit::run(tier)?);
    progress("Brinkman flow past a sphere");
    checks.extend(brinkman_sphere::run(tier)?);
    progress("Brinkman flow past a sphere, Darcy limit");
    checks.extend(brinkman_darcy_limit::run(tier)?);
    progress("low-Péclet anisotropy in Brinkman flow");
    checks.extend(low_peclet_brinkman::run(tier)?);
    progress("Stokes flow through a simple-cubic array");
    checks.extend(stokes_array::run(tier)?);
    progress("absorbing sphere in Stokes flow, high Péclet");
    checks.extend(sherwood_sphere::run(tier)?);
    Ok(checks)
}
