#include "core/numeric/qhull_facets.hpp"

// Qhull's C++ headers do not compile as C++20; the reentrant C API does, behind this one file.
extern "C" {
#include <libqhull_r/qhull_ra.h>
}

#include <cstdio>
#include <cstdlib>
#include <memory>
#include <unordered_map>

namespace habcast {

namespace {

/// Owns one Qhull context; frees all of Qhull's memory on every path, including errors.
class QhullContext {
 public:
  explicit QhullContext(FILE* errors) { qh_zero(&qh_, errors); }
  ~QhullContext() {
    qh_freeqhull(&qh_, !qh_ALL);
    int long_left = 0, short_left = 0;
    qh_memfreeshort(&qh_, &long_left, &short_left);
  }
  QhullContext(const QhullContext&) = delete;
  QhullContext& operator=(const QhullContext&) = delete;
  qhT* get() { return &qh_; }

 private:
  qhT qh_{};
};

/// An in-memory FILE* that collects Qhull's error text.
class MessageStream {
 public:
  MessageStream() : file_(open_memstream(&buffer_, &size_)) {}
  ~MessageStream() {
    if (file_) std::fclose(file_);
    std::free(buffer_);
  }
  MessageStream(const MessageStream&) = delete;
  MessageStream& operator=(const MessageStream&) = delete;
  FILE* get() { return file_ ? file_ : stderr; }
  std::string text() {
    if (!file_) return "";
    std::fflush(file_);
    return buffer_ ? std::string(buffer_, size_) : std::string();
  }

 private:
  char* buffer_ = nullptr;
  std::size_t size_ = 0;
  FILE* file_;
};

std::string first_line(const std::string& text) {
  const auto b = text.find_first_not_of(" \n");
  if (b == std::string::npos) return "no message";
  const auto e = text.find('\n', b);
  return text.substr(b, e == std::string::npos ? std::string::npos : e - b);
}

}  // namespace

HullFacets qhull_facets(const Eigen::MatrixXd& points) {
  const auto dim = static_cast<int>(points.cols());
  const auto n = static_cast<int>(points.rows());
  if (dim < 2) throw HullBuildError("a hull needs at least 2 dimensions");
  if (n < dim + 1)
    throw HullBuildError("a hull in " + std::to_string(dim) + " dimensions needs at least " + std::to_string(dim + 1) +
                         " points, got " + std::to_string(n));
  // Qhull wants row-major coordinates it may keep pointers into while the context lives.
  std::vector<coordT> coords(static_cast<std::size_t>(n) * static_cast<std::size_t>(dim));
  for (int i = 0; i < n; ++i)
    for (int j = 0; j < dim; ++j) coords[static_cast<std::size_t>(i * dim + j)] = points(i, j);

  MessageStream messages;
  QhullContext context(messages.get());
  qhT* qh = context.get();
  char options[] = "qhull";  // defaults: merged facets (C-0; Qx from 5-d), convex within roundoff
  const int exit_code = qh_new_qhull(qh, dim, n, coords.data(), False, options, nullptr, messages.get());
  if (exit_code != 0) throw HullBuildError("Qhull: " + first_line(messages.text()));

  HullFacets out;
  out.dim = dim;
  std::unordered_map<unsigned, int> index;  // Qhull facet id -> our row
  int count = 0;
  facetT* facet = nullptr;
  FORALLfacets { index[facet->id] = count++; }
  out.normals.resize(count, dim);
  out.offsets.resize(count);
  out.neighbours.resize(static_cast<std::size_t>(count));
  FORALLfacets {
    const int row = index[facet->id];
    for (int j = 0; j < dim; ++j) out.normals(row, j) = facet->normal[j];
    out.offsets(row) = facet->offset;
    facetT* neighbor = nullptr;  // names fixed by Qhull's FOREACHneighbor_ macro
    facetT** neighborp = nullptr;
    FOREACHneighbor_(facet) {
      const auto it = index.find(neighbor->id);
      if (it != index.end()) out.neighbours[static_cast<std::size_t>(row)].push_back(it->second);
    }
  }
  return out;
}

// qh_version is a global of libqhull_r itself, so this names the library loaded at run time.
std::string qhull_version() { return qh_version; }

}  // namespace habcast
