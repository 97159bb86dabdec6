#include "corruptors/rater_yaml.h"

#include "phantoms/key_path.h"
#include "phantoms/text_format.h"

#include <cstdio>
#include <cstdlib>

#include "phantoms/user_error.h"
#include "phantoms/yaml_fields.h"

namespace frugal {

namespace {

// Reads one section when the file has it; unknown keys and wrong types stop with file and line.
template <class Read>
void read_section(YamlFields& root, const char* key, Read read) {
  if (!root.has(key)) return;
  YamlFields fields = root.child(key);
  read(fields);
  fields.finish();
}

YAML::Node exact(double value) { return YAML::Node(exact_decimal(value)); }

}  // namespace

RaterOptions read_rater(const YAML::Node& root, const std::string& file) {
  YamlFields fields(root, file, "");
  RaterOptions options;
  fields.read("name", options.name);
  read_section(fields, "detection", [&](YamlFields& section) {
    DetectionOptions& d = options.detection;
    section.read("size50_mm", d.size50_mm);
    section.read("size_slope", d.size_slope);
    section.read("contrast50", d.contrast50);
    section.read("contrast_slope", d.contrast_slope);
    section.read("lapse", d.lapse);
    section.read("dot_confusion", d.dot_confusion);
    section.read("line_confusion", d.line_confusion);
  });
  read_section(fields, "counting", [&](YamlFields& section) {
    section.read("slip_probability", options.counting.slip_probability);
    section.read("cap", options.counting.cap);
  });
  read_section(fields, "grading", [&](YamlFields& section) {
    section.read("bin_edges", options.grading.bin_edges);
    section.read("perception_sd", options.grading.perception_sd);
    section.read("bias", options.grading.bias);
  });
  read_section(fields, "clicks", [&](YamlFields& section) { section.read("jitter_mm", options.clicks.jitter_mm); });
  read_section(fields, "region_grow", [&](YamlFields& section) {
    RegionGrowOptions& r = options.region_grow;
    section.read("seeds", r.seeds);
    section.read("tolerance", r.tolerance);
    section.read("connectivity", r.connectivity);
    section.read("max_region_mm3", r.max_region_mm3);
  });
  read_section(fields, "outline", [&](YamlFields& section) {
    OutlineOptions& o = options.outline;
    section.read("displacement_sd_mm", o.displacement_sd_mm);
    section.read("displacement_scale_mm", o.displacement_scale_mm);
    section.read("bias_mm", o.bias_mm);
    section.read("protrusion_rate", o.protrusion_rate);
    section.read("hole_rate", o.hole_rate);
    section.read("spurious_rate", o.spurious_rate);
  });
  read_section(fields, "cost", [&](YamlFields& section) {
    CostOptions& c = options.cost;
    section.read("presence_per_image_s", c.presence_per_image_s);
    section.read("count_per_image_s", c.count_per_image_s);
    section.read("count_per_lesion_s", c.count_per_lesion_s);
    section.read("grade_per_image_s", c.grade_per_image_s);
    section.read("points_per_image_s", c.points_per_image_s);
    section.read("points_per_click_s", c.points_per_click_s);
    section.read("partial_per_image_s", c.partial_per_image_s);
    section.read("partial_per_seed_s", c.partial_per_seed_s);
    section.read("outline_per_image_s", c.outline_per_image_s);
    section.read("outline_per_lesion_s", c.outline_per_lesion_s);
    section.read("outline_per_boundary_mm_s", c.outline_per_boundary_mm_s);
  });
  read_section(fields, "panel", [&](YamlFields& section) {
    section.read("raters", options.panel.raters);
    section.read("spread", options.panel.spread);
    section.read("bias_sd", options.panel.bias_sd);
  });
  fields.finish();
  if (std::string error = options.validate(); !error.empty()) {
    const int line = line_of_key_path(root, key_path_of(error));
    throw UserError(file + (line > 0 ? ":" + std::to_string(line) : std::string()) + ": " + error +
                    " (see docs/raters.md)");
  }
  return options;
}

RaterOptions read_rater_file(const std::string& file) { return read_rater(load_yaml_file(file), file); }

std::string rater_to_yaml(const RaterOptions& o) {
  YAML::Node root;
  root["name"] = o.name;
  YAML::Node detection;
  detection["size50_mm"] = exact(o.detection.size50_mm);
  detection["size_slope"] = exact(o.detection.size_slope);
  detection["contrast50"] = exact(o.detection.contrast50);
  detection["contrast_slope"] = exact(o.detection.contrast_slope);
  detection["lapse"] = exact(o.detection.lapse);
  detection["dot_confusion"] = exact(o.detection.dot_confusion);
  detection["line_confusion"] = exact(o.detection.line_confusion);
  root["detection"] = detection;
  root["counting"]["slip_probability"] = exact(o.counting.slip_probability);
  root["counting"]["cap"] = o.counting.cap;
  YAML::Node edges;
  for (double edge : o.grading.bin_edges) edges.push_back(exact(edge));
  edges.SetStyle(YAML::EmitterStyle::Flow);
  root["grading"]["bin_edges"] = edges;
  root["grading"]["perception_sd"] = exact(o.grading.perception_sd);
  root["grading"]["bias"] = exact(o.grading.bias);
  root["clicks"]["jitter_mm"] = exact(o.clicks.jitter_mm);
  root["region_grow"]["seeds"] = o.region_grow.seeds;
  root["region_grow"]["tolerance"] = exact(o.region_grow.tolerance);
  root["region_grow"]["connectivity"] = o.region_grow.connectivity;
  root["region_grow"]["max_region_mm3"] = exact(o.region_grow.max_region_mm3);
  root["outline"]["displacement_sd_mm"] = exact(o.outline.displacement_sd_mm);
  root["outline"]["displacement_scale_mm"] = exact(o.outline.displacement_scale_mm);
  root["outline"]["bias_mm"] = exact(o.outline.bias_mm);
  root["outline"]["protrusion_rate"] = exact(o.outline.protrusion_rate);
  root["outline"]["hole_rate"] = exact(o.outline.hole_rate);
  root["outline"]["spurious_rate"] = exact(o.outline.spurious_rate);
  YAML::Node cost;
  cost["presence_per_image_s"] = exact(o.cost.presence_per_image_s);
  cost["count_per_image_s"] = exact(o.cost.count_per_image_s);
  cost["count_per_lesion_s"] = exact(o.cost.count_per_lesion_s);
  cost["grade_per_image_s"] = exact(o.cost.grade_per_image_s);
  cost["points_per_image_s"] = exact(o.cost.points_per_image_s);
  cost["points_per_click_s"] = exact(o.cost.points_per_click_s);
  cost["partial_per_image_s"] = exact(o.cost.partial_per_image_s);
  cost["partial_per_seed_s"] = exact(o.cost.partial_per_seed_s);
  cost["outline_per_image_s"] = exact(o.cost.outline_per_image_s);
  cost["outline_per_lesion_s"] = exact(o.cost.outline_per_lesion_s);
  cost["outline_per_boundary_mm_s"] = exact(o.cost.outline_per_boundary_mm_s);
  root["cost"] = cost;
  root["panel"]["raters"] = o.panel.raters;
  root["panel"]["spread"] = exact(o.panel.spread);
  root["panel"]["bias_sd"] = exact(o.panel.bias_sd);
  YAML::Emitter out;
  out << root;
  return std::string(out.c_str()) + "\n";
}

}  // namespace frugal
