#include "phantoms/yaml_fields.h"

#include <yaml-cpp/eventhandler.h>

#include <cerrno>
#include <climits>
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <sstream>

#include "phantoms/regular_file.h"
#include "phantoms/user_error.h"

namespace frugal {

namespace {

std::string line_text(const YAML::Mark& mark) { return std::to_string(mark.line + 1); }

std::string quoted_path(const std::string& path) {
  return path.empty() ? std::string("the top level") : "'" + path + "'";
}

const char* const kAllowedKeys = "allowed: plain text keys, each once per mapping";

// The structure rules yaml-cpp does not enforce, checked on its event stream. Events for a list
// or mapping arrive before the parser descends into it, so throwing at kMaxYamlDepth stops the
// recursion long before it can exhaust the stack.
class StructureCheck final : public YAML::EventHandler {
 public:
  explicit StructureCheck(std::string file) : file_(std::move(file)) {}
  int documents() const { return documents_; }

  void OnDocumentStart(const YAML::Mark& mark) override {
    if (++documents_ > 1)
      fail(mark, "a second YAML document starts here (after '---'); allowed: one document per file");
  }
  void OnDocumentEnd() override {}
  void OnNull(const YAML::Mark& mark, YAML::anchor_t /*anchor*/) override { entry(mark, Kind::empty, ""); }
  void OnAlias(const YAML::Mark& mark, YAML::anchor_t /*anchor*/) override { entry(mark, Kind::alias, ""); }
  void OnScalar(const YAML::Mark& mark, const std::string& /*tag*/, YAML::anchor_t /*anchor*/,
                const std::string& value) override {
    entry(mark, Kind::scalar, value);
  }
  void OnSequenceStart(const YAML::Mark& mark, const std::string& /*tag*/, YAML::anchor_t /*anchor*/,
                       YAML::EmitterStyle::value /*style*/) override {
    entry(mark, Kind::list, "");
    open(mark, false);
  }
  void OnSequenceEnd() override { close(); }
  void OnMapStart(const YAML::Mark& mark, const std::string& /*tag*/, YAML::anchor_t /*anchor*/,
                  YAML::EmitterStyle::value /*style*/) override {
    entry(mark, Kind::mapping, "");
    open(mark, true);
  }
  void OnMapEnd() override { close(); }

 private:
  enum class Kind { scalar, empty, alias, list, mapping };
  struct Level {
    bool mapping = false;
    std::string path;
    bool key_next = true;
    std::string key;
    std::map<std::string, int> key_lines;
    std::string key_error;  // set when this list or mapping is itself a key: reported at its end
  };

  [[noreturn]] void fail(const YAML::Mark& mark, const std::string& message) const {
    throw UserError(file_ + ":" + line_text(mark) + ": " + message);
  }

  // Every node passes here: a mapping's keys are checked, and `child_path_` names what a list or
  // mapping about to open belongs to.
  void entry(const YAML::Mark& mark, Kind kind, const std::string& text) {
    if (levels_.empty()) {
      child_path_.clear();
      return;
    }
    Level& level = levels_.back();
    if (!level.mapping) {
      child_path_ = level.path;  // list entries share the list's path; the line tells them apart
      return;
    }
    if (!level.key_next) {
      level.key_next = true;
      child_path_ = level.path.empty() ? level.key : level.path + "." + level.key;
      return;
    }
    level.key_next = false;
    if (kind != Kind::scalar) {
      const char* what = kind == Kind::empty   ? "an empty key"
                         : kind == Kind::alias ? "an alias (*name) as a key"
                         : kind == Kind::list  ? "a list as a key"
                                               : "a mapping as a key";
      const std::string message = quoted_path(level.path) + " has " + std::string(what) + "; " + kAllowedKeys;
      if (kind == Kind::empty || kind == Kind::alias) fail(mark, message);
      // A list or mapping key is reported when it ends, so that an unclosed run of '[' (which the
      // parser reads as keys) is reported as the nesting it is.
      key_error_ = file_ + ":" + line_text(mark) + ": " + message;
      return;
    }
    const auto [first, fresh] = level.key_lines.emplace(text, mark.line + 1);
    const std::string path = level.path.empty() ? text : level.path + "." + text;
    if (!fresh)
      fail(mark, "'" + path + "' appears twice in one mapping (first on line " + std::to_string(first->second) + "); " +
                     kAllowedKeys);
    level.key = text;
  }

  void open(const YAML::Mark& mark, bool mapping) {
    if (levels_.size() >= static_cast<std::size_t>(kMaxYamlDepth))
      fail(mark, quoted_path(child_path_) + " nests lists and mappings more than " + std::to_string(kMaxYamlDepth) +
                     " levels deep; allowed: at most " + std::to_string(kMaxYamlDepth) + " levels");
    Level level;
    level.mapping = mapping;
    level.path = child_path_;
    level.key_error = std::move(key_error_);
    key_error_.clear();
    levels_.push_back(std::move(level));
  }

  void close() {
    if (!levels_.back().key_error.empty()) throw UserError(levels_.back().key_error);
    levels_.pop_back();
  }

  std::string file_;
  int documents_ = 0;
  std::vector<Level> levels_;
  std::string child_path_;
  std::string key_error_;  // for the list or mapping about to open
};

// Plain decimal text only: yaml-cpp would also turn 0x10 and 010 into numbers (as hex and octal).
bool is_decimal(const std::string& text, bool whole) {
  std::size_t i = 0;
  const std::size_t n = text.size();
  const auto digits = [&] {
    const std::size_t start = i;
    while (i < n && text[i] >= '0' && text[i] <= '9') ++i;
    return i - start;
  };
  if (i < n && (text[i] == '+' || text[i] == '-')) ++i;
  std::size_t mantissa = digits();
  if (whole) return mantissa > 0 && i == n;
  if (i < n && text[i] == '.') {
    ++i;
    mantissa += digits();
  }
  if (mantissa == 0) return false;
  if (i < n && (text[i] == 'e' || text[i] == 'E')) {
    ++i;
    if (i < n && (text[i] == '+' || text[i] == '-')) ++i;
    if (digits() == 0) return false;
  }
  return i == n;
}

const char* const kAllowedNumber = "allowed: a decimal number without quotes, such as 2, 0.5 or 1e-3";
const char* const kAllowedInteger = "allowed: a whole decimal number without quotes, such as 3";

// Plain (unquoted) text, or YAML's own explicit number tags (!!int, !!float) where they fit.
bool untagged_or(const YAML::Node& value, bool whole) {
  const std::string& tag = value.Tag();
  return tag == "?" || tag == "tag:yaml.org,2002:int" || (!whole && tag == "tag:yaml.org,2002:float");
}

// How `value` is shown in a message: quoted text keeps its quotes so that the reason is visible.
std::string shown(const YAML::Node& value) {
  return value.Tag() == "!" ? "\"" + value.Scalar() + "\" (in quotes)" : "'" + value.Scalar() + "'";
}

}  // namespace

YamlFields::YamlFields(const YAML::Node& node, std::string file, std::string path)
    : node_(node), file_(std::move(file)), path_(std::move(path)), mark_(node.Mark()) {
  if (!node_.IsMap()) {
    throw UserError(file_ + ":" + std::to_string(mark_.line + 1) + ": " +
                    (path_.empty() ? "the document" : "'" + path_ + "'") + " must be a mapping of keys to values");
  }
  // Checked again here for nodes that did not come through load_yaml_file.
  for (const auto& entry : node_) {
    if (!entry.first.IsScalar())
      throw UserError(file_ + ":" + line_text(entry.first.Mark()) + ": " + quoted_path(path_) +
                      " has a list or mapping as a key; " + kAllowedKeys);
    const std::string key = entry.first.Scalar();
    for (const auto& [known, mark] : known_keys_)
      if (known == key)
        throw UserError(file_ + ":" + line_text(entry.first.Mark()) + ": '" + key_path(key) +
                        "' appears twice in one mapping (first on line " + line_text(mark) + "); " + kAllowedKeys);
    known_keys_.emplace_back(key, entry.first.Mark());
  }
}

bool YamlFields::has(const std::string& key) const {
  allowed_keys_.insert(key);
  for (const auto& known : known_keys_)
    if (known.first == key) return true;
  return false;
}

std::string YamlFields::key_path(const std::string& key) const {
  if (key.empty()) return path_;
  return path_.empty() ? key : path_ + "." + key;
}

std::string YamlFields::where(const std::string& key) const {
  YAML::Mark mark = mark_;
  for (const auto& [known, key_mark] : known_keys_)
    if (!key.empty() && known == key) mark = key_mark;
  return file_ + ":" + std::to_string(mark.line + 1) + ": " + quoted_path(key_path(key));
}

void YamlFields::fail(const std::string& key, const std::string& message) const {
  throw UserError(where(key) + " " + message);
}

const YAML::Node& YamlFields::value_node(const std::string& key) {
  read_keys_.insert(key);
  scratch_.reset(node_[key]);
  return scratch_;
}

void YamlFields::require(const std::string& key) {
  if (!has(key)) throw UserError(where() + " is missing the required key '" + key + "'");
}

YamlFields YamlFields::child(const std::string& key) {
  allowed_keys_.insert(key);
  const YAML::Node& value = value_node(key);
  if (!value.IsMap()) fail(key, "must be a mapping of keys to values");
  YamlFields fields(value, file_, key_path(key));
  for (const auto& [known, mark] : known_keys_)
    if (known == key) fields.mark_ = mark;  // "'streaks' is missing ..." points at `streaks:`
  return fields;
}

double YamlFields::number_at(const std::string& key, const YAML::Node& value, std::size_t entry) const {
  const std::string label = entry == 0 ? std::string() : "entry " + std::to_string(entry) + " ";
  if (!value.IsScalar()) fail(key, label + (entry == 0 ? "must be a number; " : "is not a number; ") + kAllowedNumber);
  // Why the text is not taken as a number, after "which is not" (empty when it is one).
  std::string reason;
  double number = 0.0;
  if (!untagged_or(value, false)) {
    reason = "a number";
  } else if (!is_decimal(value.Scalar(), false)) {
    // 0x10, 010 and .inf look like numbers to YAML; say why they are refused.
    const std::string& text = value.Scalar();
    const bool numeric_looking = !text.empty() && std::string("0123456789+-.").find(text[0]) != std::string::npos;
    reason = numeric_looking ? "a decimal number" : "a number";
  } else {
    try {
      number = value.as<double>();
    } catch (const YAML::Exception&) {
      number = HUGE_VAL;  // decimal text that overflows a double (1e999)
    }
    if (!std::isfinite(number)) reason = "a finite number";
  }
  if (reason.empty()) return number;
  if (entry == 0) fail(key, "is " + shown(value) + ", which is not " + reason + "; " + kAllowedNumber);
  fail(key, label + "is not " + reason + " (" + shown(value) + "); " + kAllowedNumber);
}

int YamlFields::integer_at(const std::string& key, const YAML::Node& value, std::size_t entry) const {
  const std::string label = entry == 0 ? std::string() : "entry " + std::to_string(entry) + " ";
  if (!value.IsScalar())
    fail(key, label + (entry == 0 ? "must be an integer; " : "is not an integer; ") + kAllowedInteger);
  std::string reason;
  std::string allowed = kAllowedInteger;
  long long number = 0;
  if (!untagged_or(value, true) || !is_decimal(value.Scalar(), true)) {
    reason = "an integer";
  } else {
    // Base 10 explicitly: yaml-cpp's own conversion reads a leading 0 as octal.
    errno = 0;
    number = std::strtoll(value.Scalar().c_str(), nullptr, 10);
    if (errno == ERANGE || number < INT_MIN || number > INT_MAX) {
      reason = "an integer frugal can hold";
      allowed += ", from " + std::to_string(INT_MIN) + " to " + std::to_string(INT_MAX);
    }
  }
  if (reason.empty()) return static_cast<int>(number);
  if (entry == 0) fail(key, "is " + shown(value) + ", which is not " + reason + "; " + allowed);
  fail(key, label + "is not " + reason + " (" + shown(value) + "); " + allowed);
}

void YamlFields::read(const std::string& key, double& value) {
  if (has(key)) value = number_at(key, value_node(key), 0);
}
void YamlFields::read(const std::string& key, int& value) {
  if (has(key)) value = integer_at(key, value_node(key), 0);
}
void YamlFields::read(const std::string& key, bool& value) {
  if (!has(key)) return;
  const YAML::Node& node = value_node(key);
  const char* const allowed = "; allowed: true or false, without quotes";
  if (!node.IsScalar()) fail(key, std::string("must be true or false") + allowed);
  bool ok = node.Tag() == "?";
  if (ok) {
    try {
      value = node.as<bool>();
    } catch (const YAML::Exception&) {
      ok = false;
    }
  }
  if (!ok) fail(key, "is " + shown(node) + ", which is not true or false" + allowed);
}
void YamlFields::read(const std::string& key, std::string& value) {
  if (!has(key)) return;
  const YAML::Node& node = value_node(key);
  if (!node.IsScalar())
    fail(key, "must be a text value; allowed: a single value such as a name, not a list or mapping");
  value = node.Scalar();
}

void YamlFields::read(const std::string& key, std::vector<std::string>& value) {
  if (!has(key)) return;
  const YAML::Node& list = value_node(key);
  if (!list.IsSequence()) fail(key, "must be a list; allowed: a list of text values such as [a, b]");
  value.clear();
  for (const auto& item : list) {
    if (!item.IsScalar()) fail(key, "must be a list of text values; allowed: a list such as [a, b]");
    value.push_back(item.Scalar());
  }
}

void YamlFields::read(const std::string& key, std::vector<double>& value) {
  if (!has(key)) return;
  const YAML::Node& list = value_node(key);
  if (!list.IsSequence()) fail(key, std::string("must be a list of numbers; ") + kAllowedNumber + " in a list");
  value.clear();
  for (std::size_t i = 0; i < list.size(); ++i) value.push_back(number_at(key, list[i], i + 1));
}

void YamlFields::finish() {
  for (const auto& [key, mark] : known_keys_) {
    if (read_keys_.count(key) != 0) continue;
    std::string allowed;
    for (const auto& known : allowed_keys_) allowed += (allowed.empty() ? "" : ", ") + known;
    throw UserError(where(key) + " is not a key frugal knows here; allowed: " + allowed);
  }
}

int line_of_key_path(const YAML::Node& node, const std::string& path) {
  if (!node.IsMap()) return 0;
  const auto dot = path.find('.');
  const std::string key = path.substr(0, dot);
  for (const auto& entry : node) {
    if (!entry.first.IsScalar() || entry.first.Scalar() != key) continue;
    // The key's line: a block value (a nested mapping) starts on the line after it.
    const int line = entry.first.Mark().line + 1;
    if (dot == std::string::npos) return line;
    const int deeper = line_of_key_path(entry.second, path.substr(dot + 1));
    return deeper > 0 ? deeper : line;
  }
  return 0;
}

YAML::Node load_yaml_file(const std::string& file) {
  require_regular_file(file, "a YAML file");
  std::ifstream stream(file, std::ios::binary);
  if (!stream) throw UserError(file + ": cannot open the file for reading; allowed: a readable YAML file");
  std::ostringstream buffer;
  buffer << stream.rdbuf();
  if (stream.bad()) throw UserError(file + ": reading the file failed; allowed: a readable YAML file");
  return parse_yaml_text(buffer.str(), file);
}

YAML::Node parse_yaml_text(const std::string& text, const std::string& file) {
  try {
    // The structure is checked on the event stream first, so no node tree is ever built from a
    // file that breaks it.
    std::istringstream events(text);
    YAML::Parser parser(events);
    StructureCheck check(file);
    while (parser.HandleNextDocument(check)) {
    }
    YAML::Node root = check.documents() == 0 ? YAML::Node() : YAML::Load(text);
    if (!root.IsDefined() || root.IsNull())
      throw UserError(file + ": the file is empty; allowed: a YAML mapping of keys to values");
    return root;
  } catch (const YAML::ParserException& error) {
    throw UserError(file + ":" + std::to_string(error.mark.line + 1) + ":" + std::to_string(error.mark.column + 1) +
                    ": YAML syntax error: " + error.msg + "; allowed: a YAML mapping of keys to values");
  }
}

}  // namespace frugal
