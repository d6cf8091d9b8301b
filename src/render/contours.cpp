#include "render/contours.hpp"

#include <algorithm>
#include <cmath>
#include <map>
#include <utility>

namespace habcast {

namespace {

// An edge crossing is named by the grid edge it lies on, so the two cells that share an edge
// produce the same key for the same point and segments can be chained without comparing floats.
using EdgeKey = std::pair<long, int>;  // (node index, 0 = edge to the right, 1 = edge downwards)

struct Segment {
  EdgeKey a, b;
  Point2 pa, pb;
};

struct Corner {
  double v;
  double x, y;
};

Point2 crossing(const Corner& p, const Corner& q, double level) {
  const double t = (level - p.v) / (q.v - p.v);
  return {p.x + t * (q.x - p.x), p.y + t * (q.y - p.y)};
}

std::vector<Segment> cell_segments(const Eigen::MatrixXd& f, Eigen::Index r, Eigen::Index c, double level) {
  const long cols = static_cast<long>(f.cols());
  const long node = static_cast<long>(r) * cols + static_cast<long>(c);
  const double x = static_cast<double>(c), y = static_cast<double>(r);
  const Corner tl{f(r, c), x, y}, tr{f(r, c + 1), x + 1, y};
  const Corner br{f(r + 1, c + 1), x + 1, y + 1}, bl{f(r + 1, c), x, y + 1};
  if (!std::isfinite(tl.v) || !std::isfinite(tr.v) || !std::isfinite(br.v) || !std::isfinite(bl.v)) return {};
  // Edges: 0 top (tl-tr), 1 right (tr-br), 2 bottom (bl-br), 3 left (tl-bl).
  const EdgeKey keys[4] = {{node, 0}, {node + 1, 1}, {node + cols, 0}, {node, 1}};
  auto point = [&](int e) {
    switch (e) {
      case 0: return crossing(tl, tr, level);
      case 1: return crossing(tr, br, level);
      case 2: return crossing(bl, br, level);
      default: return crossing(tl, bl, level);
    }
  };
  const int index = (tl.v >= level ? 8 : 0) | (tr.v >= level ? 4 : 0) | (br.v >= level ? 2 : 0) | (bl.v >= level ? 1 : 0);
  std::vector<std::pair<int, int>> pairs;
  switch (index) {
    case 0: case 15: break;
    case 1: case 14: pairs = {{3, 2}}; break;
    case 2: case 13: pairs = {{2, 1}}; break;
    case 3: case 12: pairs = {{3, 1}}; break;
    case 4: case 11: pairs = {{0, 1}}; break;
    case 6: case 9: pairs = {{0, 2}}; break;
    case 7: case 8: pairs = {{3, 0}}; break;
    case 5: case 10: {
      // Two opposite corners above the level: the centre decides which pairs of edges connect.
      const bool centre_above = (tl.v + tr.v + br.v + bl.v) / 4.0 >= level;
      const bool tl_above = index == 10;
      // Same answer: the diagonal through tl is joined through the centre, so tr and bl are cut off.
      if (centre_above == tl_above) pairs = {{3, 2}, {0, 1}};
      else pairs = {{3, 0}, {2, 1}};
      break;
    }
  }
  std::vector<Segment> out;
  for (const auto& [e1, e2] : pairs) out.push_back({keys[e1], keys[e2], point(e1), point(e2)});
  return out;
}

}  // namespace

std::vector<Polyline> contour_lines(const Eigen::MatrixXd& values, double level) {
  std::vector<Segment> segments;
  for (Eigen::Index r = 0; r + 1 < values.rows(); ++r)
    for (Eigen::Index c = 0; c + 1 < values.cols(); ++c)
      for (Segment& s : cell_segments(values, r, c, level)) segments.push_back(s);

  std::map<EdgeKey, std::vector<std::size_t>> at;
  for (std::size_t i = 0; i < segments.size(); ++i) {
    at[segments[i].a].push_back(i);
    at[segments[i].b].push_back(i);
  }
  std::vector<bool> used(segments.size(), false);
  auto next_segment = [&](const EdgeKey& key) -> long {
    for (std::size_t i : at[key])
      if (!used[i]) return static_cast<long>(i);
    return -1;
  };

  std::vector<Polyline> lines;
  for (std::size_t start = 0; start < segments.size(); ++start) {
    if (used[start]) continue;
    used[start] = true;
    // Grow forwards from b, then backwards from a.
    std::vector<Point2> forward{segments[start].pa, segments[start].pb};
    EdgeKey end = segments[start].b;
    for (long i; (i = next_segment(end)) >= 0;) {
      const Segment& s = segments[static_cast<std::size_t>(i)];
      used[static_cast<std::size_t>(i)] = true;
      const bool from_a = s.a == end;
      forward.push_back(from_a ? s.pb : s.pa);
      end = from_a ? s.b : s.a;
    }
    std::vector<Point2> backward;
    EdgeKey begin = segments[start].a;
    for (long i; (i = next_segment(begin)) >= 0;) {
      const Segment& s = segments[static_cast<std::size_t>(i)];
      used[static_cast<std::size_t>(i)] = true;
      const bool from_a = s.a == begin;
      backward.push_back(from_a ? s.pb : s.pa);
      begin = from_a ? s.b : s.a;
    }
    Polyline line;
    line.points.assign(backward.rbegin(), backward.rend());
    line.points.insert(line.points.end(), forward.begin(), forward.end());
    line.closed = begin == end && line.points.size() > 3;
    if (line.closed) line.points.pop_back();  // the first point repeats at the end
    lines.push_back(std::move(line));
  }
  return lines;
}

std::vector<double> nice_levels(double lo, double hi, int count) {
  std::vector<double> levels;
  if (!(hi > lo) || count < 1) return levels;
  const double raw = (hi - lo) / count;
  const double exponent = std::floor(std::log10(raw));
  const double power = std::pow(10.0, exponent);
  double mantissa = 10.0;
  for (double m : {1.0, 2.0, 5.0})
    if (raw <= m * power) {
      mantissa = m;
      break;
    }
  // Level n is n * mantissa * 10^exponent; for negative exponents divide by the exact integer
  // 10^-exponent, so 0.6 comes out as the double nearest 0.6, not 3 * 0.2.
  const double divisor = exponent < 0 ? std::pow(10.0, -exponent) : 1.0;
  const double multiplier = exponent < 0 ? mantissa : mantissa * power;
  auto level = [&](double n) { return n * multiplier / divisor; };
  for (double n = std::ceil(lo / level(1.0)); level(n) < hi; n += 1.0)
    if (level(n) > lo) levels.push_back(level(n));
  return levels;
}

}  // namespace habcast
