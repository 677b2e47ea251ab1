//! Clustering estimators and quality indices.
//!
//! * [`kmeans`]: k-means with k-means++ seeding, restarts, Hamerly's bounds, dense or sparse
//!   rows and sample weights;
//! * [`kmedoids`]: FasterPAM over any dissimilarity matrix; medoids are real cases;
//! * [`hierarchical`]: agglomerative clustering with seven linkages, scipy's linkage layout;
//! * [`dbscan`]: DBSCAN with core, border and noise points;
//! * [`quality`]: silhouette, Davies–Bouldin, Calinski–Harabasz, mean within-cluster distance.
//!
//! Every random choice takes a seed, and results do not depend on the number of threads.
//! When many cases share a variant, cluster the variants with their counts as weights.

pub mod dbscan;
pub mod hierarchical;
pub mod kmeans;
pub mod kmedoids;
pub mod quality;
