// The robot's controller: a small neural network with tanh units whose weights are the genome.
// Feed-forward (inputs -> hidden -> 2 outputs) or, with context units, an Elman network whose
// hidden layer also sees its own previous activations (Elman, Cognitive Science 1990). With no
// hidden units the inputs drive the outputs directly. Every unit has a bias weight.
//
// Genome layout: for each hidden unit, its weights from the inputs (then the context units),
// then its bias; then for each output, its weights from the hidden units (or the inputs), then
// its bias.
#pragma once

#include <cmath>
#include <cstddef>
#include <span>
#include <vector>

namespace tessera::arena {

class NeuralController {
 public:
  NeuralController(std::size_t inputs, std::size_t hidden, bool recurrent)
      : inputs_(inputs),
        hidden_(hidden),
        recurrent_(recurrent && hidden > 0),
        activation_(hidden, 0.0),
        previous_(hidden, 0.0) {}

  static std::size_t weight_count(std::size_t inputs, std::size_t hidden, bool recurrent) {
    if (hidden == 0) return 2 * (inputs + 1);
    const std::size_t fan_in = inputs + (recurrent ? hidden : 0) + 1;
    return hidden * fan_in + 2 * (hidden + 1);
  }
  std::size_t weight_count() const { return weight_count(inputs_, hidden_, recurrent_); }

  // Clears the context units (start of an episode).
  void reset() {
    std::fill(activation_.begin(), activation_.end(), 0.0);
    std::fill(previous_.begin(), previous_.end(), 0.0);
  }

  // Two outputs in (-1, 1) from the inputs; `weights` holds weight_count() values.
  void step(std::span<const double> weights, std::span<const double> in, double out[2]) {
    const double* w = weights.data();
    if (hidden_ == 0) {
      for (int o = 0; o < 2; ++o) {
        double sum = 0.0;
        for (std::size_t i = 0; i < inputs_; ++i) sum += *w++ * in[i];
        sum += *w++;
        out[o] = std::tanh(sum);
      }
      return;
    }
    for (std::size_t h = 0; h < hidden_; ++h) {
      double sum = 0.0;
      for (std::size_t i = 0; i < inputs_; ++i) sum += *w++ * in[i];
      if (recurrent_)
        for (std::size_t c = 0; c < hidden_; ++c) sum += *w++ * previous_[c];
      sum += *w++;
      activation_[h] = std::tanh(sum);
    }
    for (int o = 0; o < 2; ++o) {
      double sum = 0.0;
      for (std::size_t h = 0; h < hidden_; ++h) sum += *w++ * activation_[h];
      sum += *w++;
      out[o] = std::tanh(sum);
    }
    if (recurrent_) previous_ = activation_;
  }

 private:
  std::size_t inputs_;
  std::size_t hidden_;
  bool recurrent_;
  std::vector<double> activation_;
  std::vector<double> previous_;
};

}  // namespace tessera::arena
