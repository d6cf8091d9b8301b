#pragma once
// Per-covariate novelty formulas, applied to model values (after transform and standardisation).
#include <vector>

namespace habcast {

/// Similarity of value `p` to a covariate's training values (`sorted` ascending, at least two
/// distinct values), in percent, after Elith, Kearney & Phillips 2010 (Methods in Ecology and
/// Evolution 1:330-342). With f the percentage of training values smaller than p and min/max the
/// training extremes:
///   f = 0:          100 (p - min) / (max - min)   (0 at the minimum, negative below it)
///   0 < f <= 50:    2 f
///   50 <= f < 100:  2 (100 - f)
///   f = 100:        100 (max - p) / (max - min)   (negative above the maximum)
/// The multivariate similarity (MESS) is the minimum over covariates.
double mess_similarity(const std::vector<double>& sorted, double p);

/// One covariate's term of NT1 (Mesgaran, Cousens & Webber 2014, Diversity and Distributions
/// 20:1147-1159): min(p - min, max - p, 0) / (max - min). Zero inside the range, negative outside;
/// NT1 is the sum over covariates.
double nt1_term(double min, double max, double p);

}  // namespace habcast
