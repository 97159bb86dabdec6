#include "experiments/learn/train_options_json.h"

#include <cmath>
#include <cstdint>
#include <functional>
#include <limits>
#include <map>
#include <vector>

#include "phantoms/user_error.h"

namespace frugal::learn {
namespace {

using nlohmann::json;

json bound(double value) { return std::isfinite(value) ? json(value) : json(); }

// Strict reading of one JSON object: each key a reader names is allowed; any other is an error.
class JsonFields {
 public:
  JsonFields(const json& object, std::string path) : object_(object), path_(std::move(path)) {
    if (!object_.is_object()) fail("", "must be a mapping of keys");
  }
  [[noreturn]] void fail(const std::string& key, const std::string& message) const {
    throw UserError(where(key) + ": " + message);
  }
  std::string where(const std::string& key) const { return key.empty() ? path_ : path_ + "." + key; }
  const json* find(const std::string& key) {
    allowed_.push_back(key);
    const auto found = object_.find(key);
    return found == object_.end() ? nullptr : &*found;
  }
  void number(const std::string& key, double& value) {
    if (const json* v = find(key)) {
      if (!v->is_number()) fail(key, "must be a number");
      value = v->get<double>();
    }
  }
  // Null means an open bound.
  void bound_value(const std::string& key, double& value, double open) {
    if (const json* v = find(key)) {
      if (v->is_null()) {
        value = open;
        return;
      }
      if (!v->is_number()) fail(key, "must be a number or null (no bound)");
      value = v->get<double>();
    }
  }
  void integer(const std::string& key, int& value) {
    if (const json* v = find(key)) {
      if (!v->is_number_integer() || v->get<long long>() < std::numeric_limits<int>::min() ||
          v->get<long long>() > std::numeric_limits<int>::max())
        fail(key, "must be a whole number");
      value = v->get<int>();
    }
  }
  void seed(const std::string& key, std::uint64_t& value) {
    if (const json* v = find(key)) {
      if (!(v->is_number_unsigned() || (v->is_number_integer() && v->get<long long>() >= 0)))
        fail(key, "must be a whole number from 0 to 2^64-1");
      value = v->get<std::uint64_t>();
    }
  }
  void flag(const std::string& key, bool& value) {
    if (const json* v = find(key)) {
      if (!v->is_boolean()) fail(key, "must be true or false");
      value = v->get<bool>();
    }
  }
  void text(const std::string& key, std::string& value) {
    if (const json* v = find(key)) {
      if (!v->is_string()) fail(key, "must be text");
      value = v->get<std::string>();
    }
  }
  void numbers(const std::string& key, std::vector<double>& value) {
    if (const json* v = find(key)) {
      if (!v->is_array()) fail(key, "must be a list of numbers");
      std::vector<double> read;
      for (const json& item : *v) {
        if (!item.is_number()) fail(key, "must be a list of numbers");
        read.push_back(item.get<double>());
      }
      value = read;
    }
  }
  // A name turned into a value by `parse`, whose UserError lists the allowed names.
  template <class T>
  void choice(const std::string& key, T& value, const std::function<T(const std::string&)>& parse) {
    if (const json* v = find(key)) {
      if (!v->is_string()) fail(key, "must be a name");
      try {
        value = parse(v->get<std::string>());
      } catch (const UserError& error) {
        fail(key, error.what());
      }
    }
  }
  JsonFields child(const std::string& key) {
    static const json empty = json::object();
    const json* v = find(key);
    return JsonFields(v == nullptr ? empty : *v, where(key));
  }
  void finish() const {
    for (const auto& [key, unused] : object_.items()) {
      bool known = false;
      for (const std::string& name : allowed_) known = known || name == key;
      if (known) continue;
      std::string names;
      for (const std::string& name : allowed_) names += (names.empty() ? "" : ", ") + name;
      fail(key, "unknown key; allowed: " + names);
    }
  }

 private:
  const json& object_;
  std::string path_;
  std::vector<std::string> allowed_;
};

std::string to_string(baselines::ResponseThreshold kind) {
  return kind == baselines::ResponseThreshold::relative ? "relative" : "absolute";
}
baselines::ResponseThreshold response_threshold_from_string(const std::string& name) {
  if (name == "relative") return baselines::ResponseThreshold::relative;
  if (name == "absolute") return baselines::ResponseThreshold::absolute;
  throw UserError("'" + name + "'; allowed: relative, absolute");
}

}  // namespace

json to_json(const TrainOptions& o) {
  const baselines::LineCountOptions& line = o.line_filter;
  return {{"strategy", to_string(o.strategy)},
          {"epochs", o.epochs},
          {"batch_size", o.batch_size},
          {"learning_rate", o.learning_rate},
          {"weight_decay", o.weight_decay},
          {"seed", o.seed},
          {"threads", o.threads},
          {"validation_fraction", o.validation_fraction},
          {"patience", o.patience},
          {"width", o.width},
          {"depth", o.depth},
          {"normalization", to_string(o.normalization)},
          {"channels_last", o.channels_last},
          {"bfloat16", o.bfloat16},
          {"augmentation",
           {{"flips", o.augmentation.flips},
            {"rotation_degrees", o.augmentation.rotation_degrees},
            {"deformation_mm", o.augmentation.deformation_mm},
            {"deformation_spacing_mm", o.augmentation.deformation_spacing_mm}}},
          {"dice_weight", o.dice_weight},
          {"robust_loss", to_string(o.robust_loss)},
          {"gce_q", o.gce_q},
          {"bootstrap_beta", o.bootstrap_beta},
          {"label_smoothing", o.label_smoothing},
          {"background_prior", o.background_prior},
          {"pooling_sharpness", o.pooling_sharpness},
          {"point_radius_mm", o.point_radius_mm},
          {"object_size_min_mm3", o.object_size_min_mm3},
          {"object_size_max_mm3", o.object_size_max_mm3},
          {"mask_weight", o.mask_weight},
          {"weak_weight", o.weak_weight},
          {"consistency_weight", o.consistency_weight},
          {"threshold_hu", o.threshold_hu},
          {"line_filter",
           {{"filter",
             {{"sigmas_mm", line.filter.sigmas_mm},
              {"alpha", line.filter.alpha},
              {"beta", line.filter.beta},
              {"c", line.filter.c},
              {"dark_structures", line.filter.dark_structures}}},
            {"threshold_kind", to_string(line.threshold_kind)},
            {"threshold", line.threshold},
            {"connectivity", line.connectivity},
            {"min_voxels", line.min_voxels},
            {"min_length_mm", line.min_length_mm},
            {"max_length_mm", line.max_length_mm},
            {"min_elongation", line.min_elongation}}},
          {"network_file", o.network_file},
          {"grading",
           {{"bin_edges", o.grading.bin_edges},
            {"perception_sd", o.grading.perception_sd},
            {"bias", o.grading.bias}}},
          {"field",
           {{"low", bound(o.field.low)},
            {"high", bound(o.field.high)},
            {"drop_border_connected", o.field.drop_border_connected}}}};
}

void update_from_json(const json& object, TrainOptions& o, const std::string& path) {
  JsonFields fields(object, path);
  fields.choice<Strategy>("strategy", o.strategy, strategy_from_string);
  fields.integer("epochs", o.epochs);
  fields.integer("batch_size", o.batch_size);
  fields.number("learning_rate", o.learning_rate);
  fields.number("weight_decay", o.weight_decay);
  fields.seed("seed", o.seed);
  fields.integer("threads", o.threads);
  fields.number("validation_fraction", o.validation_fraction);
  fields.integer("patience", o.patience);
  fields.integer("width", o.width);
  fields.integer("depth", o.depth);
  fields.choice<Normalization>("normalization", o.normalization, normalization_from_string);
  fields.flag("channels_last", o.channels_last);
  fields.flag("bfloat16", o.bfloat16);
  JsonFields augmentation = fields.child("augmentation");
  augmentation.flag("flips", o.augmentation.flips);
  augmentation.number("rotation_degrees", o.augmentation.rotation_degrees);
  augmentation.number("deformation_mm", o.augmentation.deformation_mm);
  augmentation.number("deformation_spacing_mm", o.augmentation.deformation_spacing_mm);
  augmentation.finish();
  fields.number("dice_weight", o.dice_weight);
  fields.choice<RobustLoss>("robust_loss", o.robust_loss, robust_loss_from_string);
  fields.number("gce_q", o.gce_q);
  fields.number("bootstrap_beta", o.bootstrap_beta);
  fields.number("label_smoothing", o.label_smoothing);
  fields.number("background_prior", o.background_prior);
  fields.number("pooling_sharpness", o.pooling_sharpness);
  fields.number("point_radius_mm", o.point_radius_mm);
  fields.number("object_size_min_mm3", o.object_size_min_mm3);
  fields.number("object_size_max_mm3", o.object_size_max_mm3);
  fields.number("mask_weight", o.mask_weight);
  fields.number("weak_weight", o.weak_weight);
  fields.number("consistency_weight", o.consistency_weight);
  fields.number("threshold_hu", o.threshold_hu);
  JsonFields line = fields.child("line_filter");
  JsonFields filter = line.child("filter");
  filter.numbers("sigmas_mm", o.line_filter.filter.sigmas_mm);
  filter.number("alpha", o.line_filter.filter.alpha);
  filter.number("beta", o.line_filter.filter.beta);
  filter.number("c", o.line_filter.filter.c);
  filter.flag("dark_structures", o.line_filter.filter.dark_structures);
  filter.finish();
  line.choice<baselines::ResponseThreshold>("threshold_kind", o.line_filter.threshold_kind,
                                            response_threshold_from_string);
  line.number("threshold", o.line_filter.threshold);
  line.integer("connectivity", o.line_filter.connectivity);
  line.integer("min_voxels", o.line_filter.min_voxels);
  line.number("min_length_mm", o.line_filter.min_length_mm);
  line.number("max_length_mm", o.line_filter.max_length_mm);
  line.number("min_elongation", o.line_filter.min_elongation);
  line.finish();
  fields.text("network_file", o.network_file);
  JsonFields grading = fields.child("grading");
  grading.numbers("bin_edges", o.grading.bin_edges);
  grading.number("perception_sd", o.grading.perception_sd);
  grading.number("bias", o.grading.bias);
  grading.finish();
  JsonFields field = fields.child("field");
  field.bound_value("low", o.field.low, -std::numeric_limits<double>::infinity());
  field.bound_value("high", o.field.high, std::numeric_limits<double>::infinity());
  field.flag("drop_border_connected", o.field.drop_border_connected);
  field.finish();
  fields.finish();
}

}  // namespace frugal::learn
