// Plain value types shared by every layer: bounds, batches of candidates, history rows.
#pragma once

#include <cstddef>
#include <cstdint>
#include <span>
#include <string>
#include <vector>

namespace tessera {

// Axis-aligned box: lower[i] < upper[i] for every dimension.
struct Bounds {
  std::vector<double> lower;
  std::vector<double> upper;

  std::size_t size() const { return lower.size(); }
  double width(std::size_t i) const { return upper[i] - lower[i]; }
};

// Throws std::invalid_argument naming `what` unless the box is well formed (finite, lower < upper).
void check_bounds(const Bounds& bounds, const std::string& what);

// A batch of candidates, stored row-major so that it crosses the plugin ABI without copies.
struct Batch {
  std::size_t count = 0;
  std::size_t genome_size = 0;
  std::size_t descriptor_size = 0;
  std::size_t extra_size = 0;
  std::vector<double> genomes;       // [count * genome_size]
  std::vector<double> fitness;       // [count]
  std::vector<double> descriptors;   // [count * descriptor_size]
  std::vector<unsigned char> valid;  // [count], 1 = evaluation usable
  std::vector<double> extras;        // [count * extra_size]

  void resize(std::size_t n, std::size_t g, std::size_t d, std::size_t e);  // all zero
  // The same shape without zeroing what the vectors already hold: for a loop that writes every
  // genome itself and clears the rest with clear_results() chunk by chunk, on its threads.
  void reshape(std::size_t n, std::size_t g, std::size_t d, std::size_t e);
  // Zeroes what evaluation writes (fitness, descriptors, valid, extras) of [first, first + count).
  void clear_results(std::size_t first, std::size_t count);
  std::span<double> genome(std::size_t i) {
    return {genomes.data() + i * genome_size, genome_size};
  }
  std::span<const double> genome(std::size_t i) const {
    return {genomes.data() + i * genome_size, genome_size};
  }
  std::span<const double> descriptor(std::size_t i) const {
    return {descriptors.data() + i * descriptor_size, descriptor_size};
  }
  std::span<const double> extra(std::size_t i) const {
    return {extras.data() + i * extra_size, extra_size};
  }
};

// One row of /history: figures after a batch.
struct HistoryRow {
  std::uint64_t evaluations = 0;
  double coverage = 0.0;
  double qd_score = 0.0;
  double max_fitness = 0.0;
};

}  // namespace tessera
