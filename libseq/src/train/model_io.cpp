#include "libseq/train/model_io.hpp"

#include <charconv>
#include <map>
#include <sstream>

#include "libseq/error.hpp"

namespace libseq::train {

namespace {

constexpr const char* kind_key = "model.kind";
constexpr const char* kind_value = "recurrent-network";

std::string options_text(const nn::NetworkOptions& o) {
  std::ostringstream text;
  text << "cell = " << nn::to_string(o.cell) << "\n"
       << "elman_activation = " << nn::to_string(o.elman_activation) << "\n"
       << "input_size = " << o.input_size << "\n"
       << "static_size = " << o.static_size << "\n"
       << "hidden_size = " << o.hidden_size << "\n"
       << "layers = " << o.layers << "\n"
       << "head = " << nn::to_string(o.head) << "\n"
       << "horizon = " << o.horizon << "\n";
  return text.str();
}

std::map<std::string, std::string> parse_lines(const std::string& text, const std::string& where) {
  std::map<std::string, std::string> values;
  std::istringstream lines(text);
  std::string line;
  while (std::getline(lines, line)) {
    if (line.empty()) continue;
    const auto equals = line.find(" = ");
    if (equals == std::string::npos) throw FormatError(where + ": line '" + line + "' is not 'key = value'");
    values[line.substr(0, equals)] = line.substr(equals + 3);
  }
  return values;
}

std::size_t parse_count(const std::map<std::string, std::string>& values, const std::string& key,
                        const std::string& where) {
  const auto it = values.find(key);
  if (it == values.end()) throw FormatError(where + ": key '" + key + "' is missing");
  std::size_t value = 0;
  const auto [end, error] = std::from_chars(it->second.data(), it->second.data() + it->second.size(), value);
  if (error != std::errc() || end != it->second.data() + it->second.size()) {
    throw FormatError(where + ": " + key + " = '" + it->second + "', expected a non-negative integer");
  }
  return value;
}

const std::string& need(const std::map<std::string, std::string>& values, const std::string& key,
                        const std::string& where) {
  const auto it = values.find(key);
  if (it == values.end()) throw FormatError(where + ": key '" + key + "' is missing");
  return it->second;
}

const io::NamedArray& array(const io::ModelBundle& bundle, const std::string& key, const std::string& source) {
  const auto it = bundle.arrays.find(key);
  if (it == bundle.arrays.end()) throw FormatError(source + ": array '" + key + "' is missing");
  return it->second;
}

const std::vector<double>& doubles(const io::ModelBundle& bundle, const std::string& key, const std::string& source) {
  try {
    return array(bundle, key, source).doubles(source + ": array '" + key + "'");
  } catch (const DataError& e) {
    throw FormatError(e.what());
  }
}

const std::string& text(const io::ModelBundle& bundle, const std::string& key, const std::string& source) {
  const auto it = bundle.text.find(key);
  if (it == bundle.text.end()) throw FormatError(source + ": text entry '" + key + "' is missing");
  return it->second;
}

io::NamedArray vector_array(const std::vector<double>& values) {
  return io::NamedArray::of_doubles({values.size()}, values);
}

std::vector<double> to_doubles(const std::vector<std::size_t>& values) {
  return {values.begin(), values.end()};
}

std::vector<std::size_t> to_counts(const std::vector<double>& values) {
  std::vector<std::size_t> counts;
  for (double v : values) counts.push_back(static_cast<std::size_t>(v));
  return counts;
}

void put_gradient(io::ModelBundle& bundle, const std::string& prefix, const GradientThroughTime& g) {
  bundle.arrays[prefix + ".shape"] = vector_array({static_cast<double>(g.steps), static_cast<double>(g.batch)});
  bundle.arrays[prefix + ".lags"] = vector_array(to_doubles(g.lags));
  bundle.arrays[prefix + ".norm"] = vector_array(g.input_gradient_norm);
  bundle.arrays[prefix + ".relative"] = vector_array(g.relative_to_last_step);
}

GradientThroughTime get_gradient(const io::ModelBundle& bundle, const std::string& prefix, const std::string& source) {
  GradientThroughTime g;
  const auto& shape = doubles(bundle, prefix + ".shape", source);
  if (shape.size() != 2) throw FormatError(source + ": array '" + prefix + ".shape' must hold 2 values");
  g.steps = static_cast<std::size_t>(shape[0]);
  g.batch = static_cast<std::size_t>(shape[1]);
  g.lags = to_counts(doubles(bundle, prefix + ".lags", source));
  g.input_gradient_norm = doubles(bundle, prefix + ".norm", source);
  g.relative_to_last_step = doubles(bundle, prefix + ".relative", source);
  return g;
}

}  // namespace

template <typename Scalar>
io::ModelBundle to_bundle(const nn::Network<Scalar>& network, const TrainSummary* summary) {
  io::ModelBundle bundle;
  const nn::NetworkOptions& o = network.options();
  bundle.text[kind_key] = kind_value;
  bundle.text["network.options"] = options_text(o);
  std::string layout;
  for (const auto& block : network.parameter_layout()) {
    layout += block.name + " = " + std::to_string(block.offset) + " " + std::to_string(block.rows) + " " +
              std::to_string(block.cols) + "\n";
  }
  bundle.text["network.layout"] = layout;  // for readers; from_bundle rebuilds the layout from the options
  bundle.arrays["network.quantile_levels"] = vector_array(o.quantile_levels);
  bundle.arrays["network.dropout"] = vector_array({o.input_dropout, o.recurrent_dropout, o.output_dropout});
  const auto p = network.parameters();
  if constexpr (std::is_same_v<Scalar, float>) {
    bundle.arrays["network.parameters"] = io::NamedArray::of_floats({p.size()}, {p.begin(), p.end()});
  } else {
    bundle.arrays["network.parameters"] = io::NamedArray::of_doubles({p.size()}, {p.begin(), p.end()});
  }
  if (summary != nullptr) {
    const TrainSummary& s = *summary;
    bundle.text["train.termination"] = to_string(s.termination);
    bundle.text["train.termination_detail"] = s.termination_detail;
    bundle.text["train.report"] = s.full_report();  // for readers; not parsed back
    bundle.arrays["train.counts"] = vector_array(
        {static_cast<double>(s.epochs_run), static_cast<double>(s.best_epoch), s.has_best ? 1.0 : 0.0,
         s.monitored_validation ? 1.0 : 0.0, s.restored_best ? 1.0 : 0.0, static_cast<double>(s.updates),
         static_cast<double>(s.clipped_total)});
    bundle.arrays["train.best_loss"] = io::NamedArray::of_doubles({}, {s.best_loss});
    bundle.arrays["train.wall_seconds"] = io::NamedArray::of_doubles({}, {s.wall_seconds});
    bundle.arrays["train.train_loss"] = vector_array(s.train_loss);
    bundle.arrays["train.validation_loss"] = vector_array(s.validation_loss);
    bundle.arrays["train.learning_rate"] = vector_array(s.learning_rate);
    bundle.arrays["train.gradient_norm_mean"] = vector_array(s.gradient_norm_mean);
    bundle.arrays["train.gradient_norm_max"] = vector_array(s.gradient_norm_max);
    bundle.arrays["train.clipped_updates"] = vector_array(s.clipped_updates);
    put_gradient(bundle, "train.initial_gradient", s.initial_gradient);
    put_gradient(bundle, "train.final_gradient", s.final_gradient);
  }
  return bundle;
}

template <typename Scalar>
LoadedModel<Scalar> from_bundle(const io::ModelBundle& bundle, std::string_view source_view) {
  const std::string source(source_view);
  if (text(bundle, kind_key, source) != kind_value) {
    throw FormatError(source + ": " + kind_key + " = '" + bundle.text.at(kind_key) + "', expected '" + kind_value +
                      "'");
  }
  const std::string where = source + ": network.options";
  const auto values = parse_lines(text(bundle, "network.options", source), where);
  nn::NetworkOptions o;
  try {
    o.cell = nn::parse_cell_type(need(values, "cell", where), "network.options cell");
    o.elman_activation =
        nn::parse_elman_activation(need(values, "elman_activation", where), "network.options elman_activation");
    o.head = nn::parse_head_type(need(values, "head", where), "network.options head");
  } catch (const ConfigError& e) {
    throw FormatError(source + ": " + e.what());
  }
  o.input_size = parse_count(values, "input_size", where);
  o.static_size = parse_count(values, "static_size", where);
  o.hidden_size = parse_count(values, "hidden_size", where);
  o.layers = parse_count(values, "layers", where);
  o.horizon = parse_count(values, "horizon", where);
  o.quantile_levels = doubles(bundle, "network.quantile_levels", source);
  const auto& dropout = doubles(bundle, "network.dropout", source);
  if (dropout.size() != 3) throw FormatError(source + ": array 'network.dropout' must hold 3 values");
  o.input_dropout = dropout[0];
  o.recurrent_dropout = dropout[1];
  o.output_dropout = dropout[2];
  std::optional<nn::Network<Scalar>> network;
  try {
    network.emplace(o);
  } catch (const ConfigError& e) {
    throw FormatError(source + ": the stored network options are invalid: " + e.what());
  }
  const io::NamedArray& stored = array(bundle, "network.parameters", source);
  constexpr bool want_float = std::is_same_v<Scalar, float>;
  if (stored.is_float() != want_float) {
    throw FormatError(source + ": array 'network.parameters' holds " + (stored.is_float() ? "float" : "double") +
                      " values; load it as a Network<" + (stored.is_float() ? "float" : "double") + ">");
  }
  if (stored.size() != network->parameter_count()) {
    throw FormatError(source + ": array 'network.parameters' has " + std::to_string(stored.size()) +
                      " values, the stored options need " + std::to_string(network->parameter_count()));
  }
  if constexpr (want_float) {
    std::copy(stored.floats().begin(), stored.floats().end(), network->parameters().begin());
  } else {
    std::copy(stored.doubles().begin(), stored.doubles().end(), network->parameters().begin());
  }

  LoadedModel<Scalar> model{std::move(*network), std::nullopt};
  if (bundle.text.count("train.termination") != 0) {
    TrainSummary s;
    try {
      s.termination = parse_termination_reason(text(bundle, "train.termination", source), "train.termination");
    } catch (const ConfigError& e) {
      throw FormatError(source + ": " + e.what());
    }
    s.termination_detail = text(bundle, "train.termination_detail", source);
    const auto& counts = doubles(bundle, "train.counts", source);
    if (counts.size() != 7) throw FormatError(source + ": array 'train.counts' must hold 7 values");
    s.epochs_run = static_cast<std::size_t>(counts[0]);
    s.best_epoch = static_cast<std::size_t>(counts[1]);
    s.has_best = counts[2] != 0;
    s.monitored_validation = counts[3] != 0;
    s.restored_best = counts[4] != 0;
    s.updates = static_cast<std::size_t>(counts[5]);
    s.clipped_total = static_cast<std::size_t>(counts[6]);
    s.best_loss = doubles(bundle, "train.best_loss", source).at(0);
    s.wall_seconds = doubles(bundle, "train.wall_seconds", source).at(0);
    s.train_loss = doubles(bundle, "train.train_loss", source);
    s.validation_loss = doubles(bundle, "train.validation_loss", source);
    s.learning_rate = doubles(bundle, "train.learning_rate", source);
    s.gradient_norm_mean = doubles(bundle, "train.gradient_norm_mean", source);
    s.gradient_norm_max = doubles(bundle, "train.gradient_norm_max", source);
    s.clipped_updates = doubles(bundle, "train.clipped_updates", source);
    s.initial_gradient = get_gradient(bundle, "train.initial_gradient", source);
    s.final_gradient = get_gradient(bundle, "train.final_gradient", source);
    model.summary = std::move(s);
  }
  return model;
}

template <typename Scalar>
void save_model(const std::filesystem::path& path, const nn::Network<Scalar>& network, const TrainSummary* summary) {
  io::save_bundle(path, to_bundle(network, summary));
}

template <typename Scalar>
LoadedModel<Scalar> load_model(const std::filesystem::path& path) {
  return from_bundle<Scalar>(io::load_bundle(path), path.string());
}

template io::ModelBundle to_bundle<float>(const nn::Network<float>&, const TrainSummary*);
template io::ModelBundle to_bundle<double>(const nn::Network<double>&, const TrainSummary*);
template LoadedModel<float> from_bundle<float>(const io::ModelBundle&, std::string_view);
template LoadedModel<double> from_bundle<double>(const io::ModelBundle&, std::string_view);
template void save_model<float>(const std::filesystem::path&, const nn::Network<float>&, const TrainSummary*);
template void save_model<double>(const std::filesystem::path&, const nn::Network<double>&, const TrainSummary*);
template LoadedModel<float> load_model<float>(const std::filesystem::path&);
template LoadedModel<double> load_model<double>(const std::filesystem::path&);

}  // namespace libseq::train
