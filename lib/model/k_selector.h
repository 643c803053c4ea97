// Choosing the number of clusters k on the warm-up sample (ModelOptions::k == 0).
//
// For every k in k_min..k_max, FitKMeans (options.restarts, options.max_iterations,
// options.seed) gives the SSE, and the mean silhouette (Rousseeuw 1987) of that fit is
// computed on a subsample. Every k's scores are reported, whichever rule chooses.
//
// Rules
//  - kElbow, the knee of the log-SSE curve: with x_k = (k − k_min)/(k_max − k_min) and
//    y_k = (ln SSE_k − ln SSE_kmax)/(ln SSE_kmin − ln SSE_kmax), the chosen k has the
//    largest gap (1 − x_k) − y_k below the chord from (0, 1) to (1, 0) (ties: smaller k).
//    The logarithm makes the rule depend on relative, not absolute, SSE gains: on a raw
//    scale the first step from k = 1 dwarfs the rest and the chord rule drifts to
//    k_min + 1 (on iris, k = 1..7, the raw-scale chord picks 2 while the visible elbow
//    and this rule pick 3). With fewer than three k values, a curve that does not fall,
//    or no point below the chord, k_min is chosen. If some k fits with SSE 0 (k equals
//    the number of distinct points), the smallest such k is chosen.
//  - kSilhouette: the highest mean silhouette (ties: smaller k). The silhouette of k = 1
//    is undefined (NaN) and never chosen; if no k has one, k_min is chosen.
//
// Silhouette: Euclidean distances in z units; s(i) = (b − a)/max(a, b) with a the mean
// distance to the other members of i's cluster and b the smallest mean distance to the
// members of another cluster, s(i) = 0 for a point alone in its cluster; the mean is over
// the subsample, which holds all points when there are at most options.silhouette_sample
// and otherwise that many drawn without replacement with PortableRandom(options.seed).
// Memory: silhouette_sample² doubles (32 MB at the default 2000) while scoring.
//
// Thread safety: a pure function; call from any thread.
#pragma once

#include <string>
#include <vector>

#include "base/matrix.h"
#include "base/status.h"
#include "model/model_options.h"

namespace seston {

struct KScore {
  int k = 0;
  double sse = 0;         // z²
  double silhouette = 0;  // mean over the subsample, in [−1, 1]; NaN for k = 1
};

struct KSelection {
  int chosen_k = 0;
  std::string rule;            // "elbow" or "silhouette"
  std::vector<KScore> scores;  // one per k, k_min..k_max in order
};

// Stable name of a rule as written in KSelection::rule.
const char* KSelectionRuleName(KSelectionRule rule);

// Errors (InvalidArgument): k_min < 1, k_max < k_min, silhouette_sample < 2, and every
// error of FitKMeans (k_max above the number of distinct points, non-finite values).
Result<KSelection> SelectK(const RowMatrix& points, const ModelOptions& options);

}  // namespace seston
