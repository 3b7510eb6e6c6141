//! The split path's level records: skipping the component weights changes nothing else.

use ladderfan::models::{self, RelativisticParams};
use ladderfan::{FieldPoint, Settings, Spectrum, Weights};

#[test]
fn skipping_the_weights_leaves_levels_labels_and_bounds_unchanged() {
    // Dirac (direct form, one root) and Klein-Gordon (two roots sharing their weights); the
    // parameters are the models' defaults, the point invented
    for model in [
        models::dirac(RelativisticParams::default()).unwrap(),
        models::klein_gordon(RelativisticParams::default()).unwrap(),
    ] {
        let point = FieldPoint {
            field: 0.02,
            kz: 0.1,
        };
        let without = Settings::with_cutoff(60);
        // the default skips the weights; asked for, they change nothing else
        assert_eq!(without.weights, Weights::Skip);
        let mut with = without.clone();
        with.weights = Weights::Compute;
        let a = Spectrum::compute(&model, point, &with).unwrap();
        let b = Spectrum::compute(&model, point, &without).unwrap();
        assert_eq!(a.weights.len(), a.levels.len() * a.dim, "{}", model.name());
        assert!(b.weights.is_empty(), "{}", model.name());
        assert!(b.weights_of(0).is_empty());
        assert_eq!(a.levels, b.levels, "{}", model.name());
        assert_eq!(a.energy_scale.to_bits(), b.energy_scale.to_bits());
        // the weights that were kept are those of unit vectors
        for i in 0..a.levels.len() {
            let sum: f64 = a.weights_of(i).iter().sum();
            assert!((sum - 1.0).abs() < 1e-12, "level {i}: weights sum to {sum}");
        }
    }
}
