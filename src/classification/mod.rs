//! Distance-to-centroid classification: which group does a row belong to?
//!
//! Given labelled training rows, each group is summarized by its centroid
//! and a scatter, and a new row is assigned to the group whose centroid is
//! nearest in squared generalized (Mahalanobis) distance, after weighing in
//! prior probabilities and, for the quadratic rule, each group's own
//! spread. Under the model that every group is multivariate normal this is
//! the rule with the smallest expected error, and it yields posterior
//! probabilities of membership.
//!
//! * [`Classifier::fit`] ([`fit`](Classifier::fit)): centroids, counts,
//!   the [`Rule`] (linear: one pooled within-group scatter, built with
//!   [`GroupMoments`](crate::moments::GroupMoments); quadratic: one
//!   scatter per group with its log-determinant) and [`Priors`].
//! * [`Classifier::predict`] and [`Classifier::predict_into`]: for each
//!   row the most probable group, the squared distance to every centroid,
//!   posterior probabilities (computed in log space), the
//!   typicality of the row under its group (the p-value of its squared
//!   distance under [`Classifier::typicality_reference`]), and
//!   optionally a "no group" flag when the row is atypical of every group.
//! * [`LeaveOneOut::estimate`] and [`Classifier::confusion_matrix`]: honest
//!   and resubstitution error rates; leave-one-out uses closed-form
//!   rank-one downdates instead of refitting `n` times.
//! * [`Classifier::discriminant_directions`]: the directions that separate
//!   the groups best, with their share of the separation.
//!
//! **Cautions.** Posterior probabilities assume that each group is
//! multivariate normal with the modelled scatter (for the linear rule, a
//! scatter common to all groups) and that the priors are right; with
//! skewed or heavy-tailed groups they are overconfident. A row is always
//! given its most probable group, even if it resembles none of them: read
//! typicality to see that. "No group" is a flag for review by a person,
//! not a verdict, and decisions that follow from a classification belong
//! to your local procedures and qualified people.
//!
//! # Example
//!
//! ```
//! use mvdist::classification::{Classifier, ClassifierOptions, LeaveOneOut, Priors, Rule};
//! use ndarray::array;
//!
//! let rows = array![
//!     [5.1, 3.5], [4.9, 3.0], [4.7, 3.2], [5.0, 3.6], [5.4, 3.9], [4.6, 3.4],
//!     [7.0, 3.2], [6.4, 3.2], [6.9, 3.1], [5.5, 2.3], [6.5, 2.8], [5.7, 2.8],
//! ];
//! let labels = ["short", "short", "short", "short", "short", "short",
//!               "long", "long", "long", "long", "long", "long"];
//! let options = ClassifierOptions::new(Rule::Linear).with_priors(Priors::Equal);
//! let classifier = Classifier::fit(rows.view(), &labels, &options)?;
//! let prediction = classifier.predict_row(&[6.6, 3.0])?;
//! assert_eq!(classifier.labels()[prediction.group], "long");
//! println!("posteriors {:?}, typicality {}", prediction.posteriors, prediction.typicality);
//!
//! let honest = LeaveOneOut::estimate(rows.view(), &labels, &options)?;
//! println!("leave-one-out error rate {}", honest.error_rate());
//! # Ok::<(), mvdist::Error>(())
//! ```

mod confusion;
mod discriminant;
mod file;
mod fit;
mod kernel;
mod leave_one_out;
mod predict;

pub use confusion::ConfusionMatrix;
pub use discriminant::DiscriminantDirections;
pub use file::CLASSIFIER_FORMAT_VERSION;
pub use fit::{Classifier, ClassifierOptions, Priors, Rule};
pub use leave_one_out::LeaveOneOut;
pub use predict::{PredictOptions, Prediction, Predictions};
