// Centroidal Voronoi tessellation of the descriptor box (Vassiliades, Chatzilygeroudis & Mouret,
// IEEE TEVC 2018): centroids from Lloyd iterations (k-means) on uniform samples of the box,
// looked up through a k-d tree.
#pragma once

#include <cstdint>
#include <memory>
#include <span>
#include <string>
#include <vector>

#include "core/archive/space.hpp"

namespace tessera {

struct CvtSettings {
  std::int64_t cells = 1000;
  std::int64_t samples = 0;  // uniform samples of the box; 0 = 100 per cell, at least 100000
  int iterations = 50;       // Lloyd iterations (stops earlier once no sample changes cell)
  std::uint64_t seed = 0;    // seed of the samples and the initial centroids

  std::int64_t effective_samples() const;
};

// Changes whenever tessellate_descriptor_box would give different centroids for the same settings
// (sampling, initialisation, stopping rule), so caches keyed by the settings can tell.
inline constexpr std::uint32_t kCvtAlgorithmVersion = 1;

// Computes K centroids (row-major [K * D]). Bit-identical for any number of threads: the
// samples come in fixed chunks, each drawn from its own stream keyed by (seed, chunk index), and
// every sum is taken in sample order whatever the threads. Throws std::invalid_argument for
// malformed bounds or settings (cells < 1 or above kMaxCells, samples < cells, iterations < 0).
std::vector<double> tessellate_descriptor_box(const Bounds& bounds, const CvtSettings& settings);

// The uniform samples of the box that tessellate_descriptor_box clusters (row-major [N * D]).
std::vector<double> cvt_samples(const Bounds& bounds, const CvtSettings& settings);

// Lloyd iterations on given points (row-major [N * dims]) starting from the first `cells`
// points; at most `iterations` centroid updates, fewer once no point changes cell. A cell left
// empty keeps its previous centroid.
std::vector<double> lloyd_centroids(std::span<const double> points, std::size_t dims,
                                    std::int64_t cells, int iterations);

// Mean squared Euclidean distance from each point to its nearest centroid (quantisation energy).
double quantisation_energy(std::span<const double> points, std::span<const double> centroids,
                           std::size_t dims);

class CvtSpace final : public DescriptorSpace {
 public:
  CvtSpace(Bounds bounds, std::vector<std::string> names, std::vector<double> centroids);
  ~CvtSpace() override;

  std::string kind() const override { return "cvt"; }
  std::int64_t cell_count() const override;
  // Nearest centroid (Euclidean) of the descriptor clamped to the bounds.
  CellLookup cell_of(std::span<const double> descriptor) const override;

  const std::vector<double>& centroids() const { return centroids_; }

 private:
  struct Index;
  std::vector<double> centroids_;
  std::unique_ptr<Index> index_;
};

}  // namespace tessera
