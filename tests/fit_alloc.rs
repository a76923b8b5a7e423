//! No heap allocation in repeated ln L evaluations of a dynamical
//! `RvModel` (STYLE: no allocation inside a likelihood call; the per-call
//! decoded parameters, residuals and jitters live in per-thread buffers).
//! Checked with a counting global allocator, as tests/dynamical_alloc.rs
//! does for the model itself: a check of our own code, no external
//! reference needed. The values are checked against a fresh evaluation on
//! another thread (fresh buffers): the same to the bit.

mod alloc_support;

mod injection_support;

use apsidal::fit::models::{ModelKind, RvModel, TrendKind, default_parameters};
use injection_support as inj;

use alloc_support::count;

#[test]
fn repeated_dynamical_ln_likelihood_does_not_allocate() {
    let obs = inj::synthetic(7, 120, 1200.0);
    for kind in [ModelKind::CoplanarSinI, ModelKind::ThreeDimensional] {
        let params =
            default_parameters(kind, &inj::guesses(0.0, 0.0, 0.0), &obs, TrendKind::Linear)
                .unwrap();
        let model = RvModel::new(
            obs.clone(),
            kind,
            inj::STAR_MASS,
            inj::T_REF,
            &inj::planet_names(),
            TrendKind::Linear,
            params,
        )
        .unwrap();
        let mut full = model.params.start_full();
        let first = model.ln_likelihood(&full);
        assert!(first.is_finite());
        let mut values = Vec::with_capacity(5);
        let mut vectors = Vec::with_capacity(5);
        for j in 0..5 {
            let mut v = full.clone();
            v[0] *= 1.0 + 1e-4 * j as f64;
            vectors.push(v);
        }
        let before = count();
        for v in &vectors {
            full.copy_from_slice(v);
            values.push(model.ln_likelihood(&full));
            std::hint::black_box(model.chi_square(&full));
        }
        let made = count() - before;
        assert_eq!(made, 0, "{kind:?}: {made} allocations in 5 evaluations");
        // The same numbers from fresh buffers on a new thread.
        let fresh: Vec<f64> = std::thread::scope(|s| {
            s.spawn(|| vectors.iter().map(|v| model.ln_likelihood(v)).collect())
                .join()
                .unwrap()
        });
        for (a, b) in values.iter().zip(&fresh) {
            assert_eq!(a.to_bits(), b.to_bits(), "{kind:?}");
        }
    }
}
