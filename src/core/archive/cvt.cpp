#include "core/archive/cvt.hpp"

#include <tbb/blocked_range.h>
#include <tbb/parallel_for.h>
#include <tbb/parallel_reduce.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>
#include <string>

#include "core/archive/nearest.hpp"
#include "core/base/rng.hpp"

namespace tessera {
namespace {

// Samples per random stream. Part of the algorithm: changing it changes the samples, so it is
// covered by kCvtAlgorithmVersion.
constexpr std::size_t kSampleChunk = 4096;
// Points per task of the parallel loops; any value gives the same result.
constexpr std::size_t kGrain = 1024;

void check_cells(std::int64_t cells, std::int64_t points, const std::string& what) {
  if (cells < 1) throw std::invalid_argument(what + ": cells must be at least 1");
  if (cells > kMaxCells) throw std::invalid_argument(what + ": more than 2^28 cells");
  if (points < cells)
    throw std::invalid_argument(what + ": " + std::to_string(points) + " samples for " +
                                std::to_string(cells) + " cells; need at least one per cell");
}

// Recomputes every non-empty cell's centroid as the mean of its points. The points of each cell
// are summed in point order (a stable counting sort by cell), so the result is the same for any
// number of threads.
void update_centroids(std::span<const double> points, std::size_t dims,
                      const std::vector<std::uint32_t>& cell_of, std::vector<double>& centroids) {
  const std::size_t k = centroids.size() / dims;
  std::vector<std::size_t> start(k + 1, 0);
  for (auto c : cell_of) ++start[c + 1];
  for (std::size_t c = 0; c < k; ++c) start[c + 1] += start[c];
  std::vector<std::uint32_t> order(cell_of.size());
  {
    std::vector<std::size_t> next(start.begin(), start.end() - 1);
    for (std::size_t i = 0; i < cell_of.size(); ++i)
      order[next[cell_of[i]]++] = static_cast<std::uint32_t>(i);
  }
  tbb::parallel_for(tbb::blocked_range<std::size_t>(0, k, 256),
                    [&](const tbb::blocked_range<std::size_t>& range) {
                      std::vector<double> sum(dims);
                      for (std::size_t c = range.begin(); c != range.end(); ++c) {
                        const std::size_t n = start[c + 1] - start[c];
                        if (n == 0) continue;  // empty cell keeps its previous centroid
                        std::fill(sum.begin(), sum.end(), 0.0);
                        for (std::size_t j = start[c]; j < start[c + 1]; ++j) {
                          const double* p = points.data() + std::size_t{order[j]} * dims;
                          for (std::size_t d = 0; d < dims; ++d) sum[d] += p[d];
                        }
                        for (std::size_t d = 0; d < dims; ++d)
                          centroids[c * dims + d] = sum[d] / static_cast<double>(n);
                      }
                    });
}

}  // namespace

std::int64_t CvtSettings::effective_samples() const {
  if (samples > 0) return samples;
  // Clamped so that absurd cell counts cannot overflow before they are refused.
  return std::max<std::int64_t>(100000, 100 * std::clamp<std::int64_t>(cells, 0, kMaxCells));
}

std::vector<double> cvt_samples(const Bounds& bounds, const CvtSettings& settings) {
  check_bounds(bounds, "cvt");
  const std::int64_t total = settings.effective_samples();
  check_cells(settings.cells, total, "cvt");
  const std::size_t dims = bounds.size();
  const auto n = static_cast<std::size_t>(total);
  std::vector<double> samples(n * dims);
  const std::size_t chunks = (n + kSampleChunk - 1) / kSampleChunk;
  tbb::parallel_for(std::size_t{0}, chunks, [&](std::size_t chunk) {
    // One stream per chunk: the samples do not depend on which thread draws them.
    Rng rng(settings.seed, chunk, 0, static_cast<std::uint64_t>(StreamPurpose::cvt));
    const std::size_t end = std::min(n, (chunk + 1) * kSampleChunk);
    for (std::size_t i = chunk * kSampleChunk; i < end; ++i)
      for (std::size_t d = 0; d < dims; ++d)
        samples[i * dims + d] = rng.uniform(bounds.lower[d], bounds.upper[d]);
  });
  return samples;
}

std::vector<double> lloyd_centroids(std::span<const double> points, std::size_t dims,
                                    std::int64_t cells, int iterations) {
  if (dims == 0 || points.size() % dims != 0)
    throw std::invalid_argument("lloyd: point array does not match dimension " +
                                std::to_string(dims));
  const std::size_t n = points.size() / dims;
  check_cells(cells, static_cast<std::int64_t>(n), "lloyd");
  if (n > std::numeric_limits<std::uint32_t>::max())
    throw std::invalid_argument("lloyd: more than 2^32 points");
  if (iterations < 0) throw std::invalid_argument("lloyd: iterations must be at least 0");
  for (double v : points)
    if (!std::isfinite(v)) throw std::invalid_argument("lloyd: a point is not finite");

  // Initial centroids: the first K points (uniform samples, so a uniform random start).
  const auto k = static_cast<std::size_t>(cells);
  std::vector<double> centroids(points.begin(),
                                points.begin() + static_cast<std::ptrdiff_t>(k * dims));
  if (iterations == 0) return centroids;

  // Hamerly's bounds (Hamerly, SIAM SDM 2010) skip most searches once centroids settle: per
  // point an upper bound on the distance to its centroid and a lower bound on the distance to
  // any other. A point that cannot skip scans its centroid's nearest neighbouring centroids in
  // increasing distance until the next lies farther than twice the point's own distance (no
  // nearer centroid can lie beyond: triangle inequality, Elkan, ICML 2003) and than its distance
  // plus the runner-up's (so the runner-up is exact too); only when the list runs out does it
  // search the k-d tree. The assignment is the exact nearest centroid (lowest
  // index on ties) as plain Lloyd would find; bounds only decide what may be skipped, with a
  // relative margin far above rounding error. All per-point work depends on that point alone,
  // so any split over threads gives the same result.
  constexpr double kMargin = 1.0 - 1e-9;
  // Neighbour list length: 16 per dimension leaves under 2% of points to the tree in 6-D
  // (measured on uniform samples); longer lists cost more than the searches they save.
  const std::size_t m = std::min<std::size_t>(k - 1, std::min<std::size_t>(16 * dims, 160));
  const bool lists_complete = m == k - 1;
  std::vector<std::uint32_t> cell_of(n, 0), near_index(k * m);
  std::vector<double> upper(n, 0.0), lower(n, 0.0), near_dist(k * m);
  std::vector<double> previous, half_gap(k), drift(k);

  for (int it = 0; it < iterations; ++it) {
    const NearestCentroid index(centroids, dims);
    const bool first = it == 0;
    if (!first) {
      // Each centroid's m nearest other centroids, and half the distance to the nearest: a point
      // closer than that to its own centroid cannot be nearer to another one.
      tbb::parallel_for(tbb::blocked_range<std::size_t>(0, k, 64),
                        [&](const tbb::blocked_range<std::size_t>& range) {
                          std::vector<std::uint32_t> idx(m + 1);
                          std::vector<double> sq(m + 1);
                          for (std::size_t c = range.begin(); c != range.end(); ++c) {
                            const std::size_t got =
                                index.nearest_k(&centroids[c * dims], m + 1, idx.data(), sq.data());
                            std::size_t j = 0;
                            for (std::size_t e = 0; e < got && j < m; ++e) {
                              if (idx[e] == c) continue;
                              near_index[c * m + j] = idx[e];
                              near_dist[c * m + j] = std::sqrt(sq[e]);
                              ++j;
                            }
                            half_gap[c] = m > 0 ? 0.5 * near_dist[c * m]
                                                : std::numeric_limits<double>::infinity();
                          }
                        });
    }
    // The count of moved points is an integer sum, exact in any order.
    const std::size_t moved = tbb::parallel_reduce(
        tbb::blocked_range<std::size_t>(0, n, kGrain), std::size_t{0},
        [&](const tbb::blocked_range<std::size_t>& range, std::size_t count) {
          for (std::size_t i = range.begin(); i != range.end(); ++i) {
            const double* x = points.data() + i * dims;
            const std::uint32_t a = cell_of[i];
            if (first) {
              const auto two = index.nearest_two(x, 0);
              cell_of[i] = two.index;
              upper[i] = std::sqrt(two.first);
              lower[i] = std::sqrt(two.second);
              ++count;
              continue;
            }
            const double bound = std::max(half_gap[a], lower[i]) * kMargin;
            if (upper[i] < bound) continue;
            const double own = index.squared_distance(x, a);
            const double u = std::sqrt(own);
            upper[i] = u;
            if (u < bound) continue;
            // Nearest and runner-up among the neighbour list, ordered by (distance, index).
            std::uint32_t best_index = a;
            double best = own, second = std::numeric_limits<double>::infinity();
            double beyond = std::numeric_limits<double>::infinity();  // bound for the unscanned
            bool settled = lists_complete;
            const double reach = 2.0 * u / kMargin;
            for (std::size_t j = 0; j < m; ++j) {
              const double gap = near_dist[a * m + j];
              if (gap > std::max(reach, (u + std::sqrt(second)) / kMargin)) {
                beyond = gap - u;
                settled = true;
                break;
              }
              const std::uint32_t c = near_index[a * m + j];
              const double d = index.squared_distance(x, c);
              if (d < best || (d == best && c < best_index)) {
                second = best;
                best = d;
                best_index = c;
              } else if (d < second) {
                second = d;
              }
            }
            if (!settled) {
              const auto two = index.nearest_two(x, a);
              best_index = two.index;
              best = two.first;
              second = two.second;
            }
            if (best_index != a) ++count;
            cell_of[i] = best_index;
            upper[i] = std::sqrt(best);
            lower[i] = std::min(std::sqrt(second), beyond);
          }
          return count;
        },
        [](std::size_t a, std::size_t b) { return a + b; });
    if (!first && moved == 0) break;  // converged: the centroids are the means already

    previous = centroids;
    update_centroids(points, dims, cell_of, centroids);
    // Move the bounds by how far the centroids moved (triangle inequality).
    double max1 = 0.0, max2 = 0.0;
    std::size_t arg1 = k;
    for (std::size_t c = 0; c < k; ++c) {
      double sum = 0.0;
      for (std::size_t d = 0; d < dims; ++d) {
        const double diff = centroids[c * dims + d] - previous[c * dims + d];
        sum += diff * diff;
      }
      drift[c] = std::sqrt(sum);
      if (drift[c] > max1) {
        max2 = max1;
        max1 = drift[c];
        arg1 = c;
      } else if (drift[c] > max2) {
        max2 = drift[c];
      }
    }
    tbb::parallel_for(tbb::blocked_range<std::size_t>(0, n, kGrain),
                      [&](const tbb::blocked_range<std::size_t>& range) {
                        for (std::size_t i = range.begin(); i != range.end(); ++i) {
                          upper[i] += drift[cell_of[i]];
                          lower[i] -= cell_of[i] == arg1 ? max2 : max1;
                        }
                      });
  }
  return centroids;
}

std::vector<double> tessellate_descriptor_box(const Bounds& bounds, const CvtSettings& settings) {
  const std::vector<double> samples = cvt_samples(bounds, settings);
  return lloyd_centroids(samples, bounds.size(), settings.cells, settings.iterations);
}

double quantisation_energy(std::span<const double> points, std::span<const double> centroids,
                           std::size_t dims) {
  if (dims == 0 || points.empty() || points.size() % dims != 0)
    throw std::invalid_argument("quantisation energy: point array does not match dimension " +
                                std::to_string(dims));
  const NearestCentroid index(centroids, dims);
  const std::size_t n = points.size() / dims;
  // Fixed chunks whose partial sums are added in chunk order: the same total for any threads.
  const std::size_t chunks = (n + kSampleChunk - 1) / kSampleChunk;
  std::vector<double> partial(chunks, 0.0);
  tbb::parallel_for(std::size_t{0}, chunks, [&](std::size_t chunk) {
    double sum = 0.0;
    const std::size_t end = std::min(n, (chunk + 1) * kSampleChunk);
    for (std::size_t i = chunk * kSampleChunk; i < end; ++i) {
      const double* x = points.data() + i * dims;
      sum += index.squared_distance(x, index.nearest(x));
    }
    partial[chunk] = sum;
  });
  double total = 0.0;
  for (double s : partial) total += s;
  return total / static_cast<double>(n);
}

struct CvtSpace::Index {
  NearestCentroid nearest;
};

CvtSpace::CvtSpace(Bounds bounds, std::vector<std::string> names, std::vector<double> centroids)
    : DescriptorSpace(std::move(bounds), std::move(names)), centroids_(std::move(centroids)) {
  const std::size_t dims = dimensions();
  if (centroids_.empty() || centroids_.size() % dims != 0)
    throw std::invalid_argument("cvt: " + std::to_string(centroids_.size()) +
                                " centroid values do not make whole centroids of dimension " +
                                std::to_string(dims));
  if (static_cast<std::int64_t>(centroids_.size() / dims) > kMaxCells)
    throw std::invalid_argument("cvt: more than 2^28 cells");
  for (double v : centroids_)
    if (!std::isfinite(v)) throw std::invalid_argument("cvt: a centroid is not finite");
  index_ = std::make_unique<Index>(Index{NearestCentroid(centroids_, dims)});
}

CvtSpace::~CvtSpace() = default;

std::int64_t CvtSpace::cell_count() const {
  return static_cast<std::int64_t>(centroids_.size() / dimensions());
}

CellLookup CvtSpace::cell_of(std::span<const double> descriptor) const {
  constexpr std::size_t kInline = 16;
  const std::size_t dims = dimensions();
  double inline_buffer[kInline];
  std::vector<double> heap_buffer;
  double* x = inline_buffer;
  if (dims > kInline) {
    heap_buffer.resize(dims);
    x = heap_buffer.data();
  }
  std::copy_n(descriptor.begin(), dims, x);
  CellLookup out;
  out.clamped = clamp({x, dims});
  out.cell = index_->nearest.nearest(x);
  return out;
}

}  // namespace tessera
