#include "libseq/train/diagnostics.hpp"

#include <cmath>
#include <cstdio>
#include <limits>

#include "libseq/error.hpp"

namespace libseq::train {

std::vector<std::size_t> default_gradient_lags() { return {0, 1, 2, 5, 10, 20, 50, 100, 200, 500, 1000}; }

template <typename Scalar>
GradientThroughTime gradient_through_time(std::span<const Scalar> input_gradients, std::size_t steps,
                                          std::size_t batch, std::size_t input_size,
                                          std::span<const std::uint8_t> mask, std::span<const std::size_t> lags) {
  if (input_gradients.size() != steps * batch * input_size || (!mask.empty() && mask.size() != steps * batch)) {
    throw DataError("gradient_through_time: " + std::to_string(input_gradients.size()) + " input gradients and " +
                    std::to_string(mask.size()) + " mask entries do not fit " + std::to_string(steps) + " steps × " +
                    std::to_string(batch) + " sequences × " + std::to_string(input_size) + " inputs");
  }
  GradientThroughTime profile;
  profile.steps = steps;
  profile.batch = batch;
  const double nan = std::numeric_limits<double>::quiet_NaN();
  for (std::size_t lag : lags) {
    if (lag >= steps) continue;
    const std::size_t t = steps - 1 - lag;
    double sum = 0.0;
    std::size_t counted = 0;
    for (std::size_t b = 0; b < batch; ++b) {
      if (!mask.empty() && mask[t * batch + b] == 0) continue;
      double squares = 0.0;
      for (std::size_t j = 0; j < input_size; ++j) {
        const double g = static_cast<double>(input_gradients[(t * batch + b) * input_size + j]);
        squares += g * g;
      }
      sum += std::sqrt(squares);
      ++counted;
    }
    profile.lags.push_back(lag);
    profile.input_gradient_norm.push_back(counted > 0 ? sum / static_cast<double>(counted) : nan);
  }
  double reference = nan;
  for (std::size_t i = 0; i < profile.lags.size(); ++i) {
    if (profile.lags[i] == 0) reference = profile.input_gradient_norm[i];
  }
  for (double norm : profile.input_gradient_norm) {
    profile.relative_to_last_step.push_back(reference > 0 ? norm / reference : nan);
  }
  return profile;
}

template <typename Scalar>
GradientThroughTime measure_gradient_through_time(nn::Network<Scalar>& network, const nn::SequenceBatch<Scalar>& batch,
                                                  const nn::Loss& loss, std::span<const std::size_t> lags) {
  network.loss_and_gradient(batch, loss, nn::DropoutMode::off, nullptr);
  return gradient_through_time<Scalar>(network.input_gradients(), batch.steps, batch.batch,
                                       network.options().input_size, batch.mask, lags);
}

std::string GradientThroughTime::report() const {
  if (!measured()) return "gradient through time: not measured\n";
  std::string text = "gradient through time (mean over " + std::to_string(batch) + " sequences of " +
                     std::to_string(steps) + " steps; |d loss / d input| at step T-1-lag):\n";
  char line[128];
  for (std::size_t i = 0; i < lags.size(); ++i) {
    std::snprintf(line, sizeof line, "  lag %5zu: %.3e  (%.3e of lag 0)\n", lags[i], input_gradient_norm[i],
                  relative_to_last_step[i]);
    text += line;
  }
  return text;
}

template GradientThroughTime gradient_through_time<float>(std::span<const float>, std::size_t, std::size_t,
                                                          std::size_t, std::span<const std::uint8_t>,
                                                          std::span<const std::size_t>);
template GradientThroughTime gradient_through_time<double>(std::span<const double>, std::size_t, std::size_t,
                                                           std::size_t, std::span<const std::uint8_t>,
                                                           std::span<const std::size_t>);
template GradientThroughTime measure_gradient_through_time<float>(nn::Network<float>&,
                                                                  const nn::SequenceBatch<float>&, const nn::Loss&,
                                                                  std::span<const std::size_t>);
template GradientThroughTime measure_gradient_through_time<double>(nn::Network<double>&,
                                                                   const nn::SequenceBatch<double>&, const nn::Loss&,
                                                                   std::span<const std::size_t>);

}  // namespace libseq::train
