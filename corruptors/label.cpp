#include "corruptors/label.h"

#include <map>

#include "phantoms/user_error.h"

namespace frugal {

namespace {

const std::map<std::string, LabelKind> kKinds{{"presence", LabelKind::presence}, {"count", LabelKind::count},
                                              {"grade", LabelKind::grade},       {"points", LabelKind::points},
                                              {"partial", LabelKind::partial_mask}, {"outline", LabelKind::outline}};
const std::map<std::string, CountScope> kScopes{{"image", CountScope::image},
                                                {"reference-slice", CountScope::reference_slice},
                                                {"left-half", CountScope::left_half},
                                                {"right-half", CountScope::right_half}};

template <class Value>
std::string name_of(const std::map<std::string, Value>& table, Value value) {
  for (const auto& [name, entry] : table)
    if (entry == value) return name;
  return "?";
}

template <class Value>
Value parse(const std::map<std::string, Value>& table, const std::string& name, const char* what) {
  const auto found = table.find(name);
  if (found != table.end()) return found->second;
  std::string allowed;
  for (const auto& entry : table) allowed += (allowed.empty() ? "" : ", ") + entry.first;
  throw UserError(std::string(what) + " '" + name + "' is unknown; allowed: " + allowed);
}

}  // namespace

std::string to_string(LabelKind kind) { return name_of(kKinds, kind); }
LabelKind label_kind_from_string(const std::string& name) { return parse(kKinds, name, "label kind"); }
std::string to_string(CountScope scope) { return name_of(kScopes, scope); }
CountScope count_scope_from_string(const std::string& name) { return parse(kScopes, name, "count scope"); }

}  // namespace frugal
