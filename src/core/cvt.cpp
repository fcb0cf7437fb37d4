#include "core/cvt.hpp"

#include <tbb/blocked_range.h>
#include <tbb/parallel_for.h>
#include <tbb/parallel_reduce.h>

#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <string>

#include "core/nearest.hpp"
#include "core/rng.hpp"

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
  return std::max<std::int64_t>(100000, 100 * cells);
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
  if (iterations < 0) throw std::invalid_argument("lloyd: iterations must be at least 0");

  // Initial centroids: the first K points (uniform samples, so a uniform random start).
  const auto k = static_cast<std::size_t>(cells);
  std::vector<double> centroids(points.begin(), points.begin() + static_cast<std::ptrdiff_t>(k * dims));
  std::vector<std::uint32_t> cell_of(n, 0);

  for (int it = 0; it < iterations; ++it) {
    const NearestCentroid index(centroids, dims);
    const bool first = it == 0;
    // Each point's cell depends on that point alone, so any split over threads gives the same
    // assignment; the count of moved points is an integer sum, exact in any order.
    const std::size_t moved = tbb::parallel_reduce(
        tbb::blocked_range<std::size_t>(0, n, kGrain), std::size_t{0},
        [&](const tbb::blocked_range<std::size_t>& range, std::size_t count) {
          for (std::size_t i = range.begin(); i != range.end(); ++i) {
            const double* x = points.data() + i * dims;
            // The previous cell is usually still nearest: its distance prunes the search.
            const std::uint32_t c = first ? index.nearest(x) : index.nearest(x, cell_of[i]);
            if (first || c != cell_of[i]) {
              cell_of[i] = c;
              ++count;
            }
          }
          return count;
        },
        [](std::size_t a, std::size_t b) { return a + b; });
    if (!first && moved == 0) break;  // converged: the centroids are the means already
    update_centroids(points, dims, cell_of, centroids);
  }
  return centroids;
}

std::vector<double> compute_cvt_centroids(const Bounds& bounds, const CvtSettings& settings) {
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
