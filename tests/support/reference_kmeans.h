// Deliberately simple k-means helpers that the model's fast code is checked against, and
// the data the model tests share (Fisher's iris, seeded Gaussian mixtures).
//
// Everything here is plain loops over doubles with no cleverness, so that it is easy to
// believe; speed does not matter.
#pragma once

#include <cstdint>
#include <vector>

#include "base/matrix.h"

namespace seston::testing {

// Nearest centre of every point by summing (x_t − c_t)² over features; ties to the
// lowest centre index.
void ReferenceNearest(const RowMatrix& points, const RowMatrix& centres, std::vector<int>* index,
                      std::vector<double>* squared_distance);

// Sum over points of the squared distance to centres.row(labels[i]).
double ReferenceSse(const RowMatrix& points, const RowMatrix& centres,
                    const std::vector<int>& labels);

// Adjusted Rand index (Hubert & Arabie 1985) of two labelings of the same points, from
// the contingency table: (Σ C(n_ij,2) − E) / (½(Σ C(a_i,2) + Σ C(b_j,2)) − E) with
// E = Σ C(a_i,2) Σ C(b_j,2) / C(n,2). Labels are any non-negative ints.
double AdjustedRandIndex(const std::vector<int>& a, const std::vector<int>& b);

// Fisher's iris from tests/data/iris.csv: 150 × 4 in cm, and species as 0, 1, 2 in order
// of first appearance.
void LoadIris(RowMatrix* features, std::vector<int>* species);

// Columns scaled to z-scores with the population sd (divide by n).
RowMatrix ZScore(const RowMatrix& points);

// A seeded mixture of isotropic Gaussians: `count` points drawn from `means` (one per
// row) with equal probability and per-component sd `sd`; labels are component indices.
void DrawGaussianMixture(const RowMatrix& means, double sd, std::size_t count, std::uint64_t seed,
                         RowMatrix* points, std::vector<int>* labels);

}  // namespace seston::testing
