// SetDesignValue: one value of a design's YAML text replaced in place, every other byte kept, so that
// a message about the changed design cites the line and column of the user's own file.
#include <yaml-cpp/yaml.h>

#include <optional>
#include <string>
#include <vector>

#include "hallway/design_loader.hpp"

namespace hallway {
namespace {

std::vector<std::string> split_path(const std::string& key_path) {
  std::vector<std::string> parts(1);
  for (char c : key_path) {
    if (c == '.')
      parts.emplace_back();
    else
      parts.back() += c;
  }
  return parts;
}

// The scalar node at `key_path` (see design_loader.hpp for the path syntax); *flow is set when the
// node sits in a flow collection ("[0.5, 1]"), where ',', ']' and '}' end a plain scalar.
YAML::Node find_value(const YAML::Node& root, const std::string& path, const std::string& key_path, bool* flow) {
  auto fail = [&](const std::string& why) -> void { throw DesignError({path, 0, 0, key_path}, why); };
  YAML::Node node = root;
  *flow = false;
  for (const std::string& part : split_path(key_path)) {
    std::string key = part;
    std::optional<std::size_t> index;
    if (const auto br = key.find('['); br != std::string::npos) {
      if (key.back() != ']') fail("malformed index in '" + part + "'");
      try {
        index = std::stoul(key.substr(br + 1, key.size() - br - 2));
      } catch (...) {
        fail("malformed index in '" + part + "'");
      }
      key = key.substr(0, br);
    }
    YAML::Node next;
    if (node.IsMap()) {
      if (!node[key]) fail("no key '" + key + "' at this place of the design");
      next.reset(node[key]);
    } else if (node.IsSequence()) {
      bool found = false;
      for (std::size_t k = 0; k < node.size() && !found; ++k)
        if (node[k].IsMap() && node[k]["name"] && node[k]["name"].IsScalar() && node[k]["name"].Scalar() == key) {
          next.reset(node[k]);
          found = true;
        }
      if (!found) fail("no object named '" + key + "' in this list");
    } else {
      fail("'" + part + "' goes below a plain value");
    }
    *flow = *flow || next.Style() == YAML::EmitterStyle::Flow;
    if (index) {
      if (!next.IsSequence() || *index >= next.size())
        fail("index " + std::to_string(*index) + " is out of range in '" + part + "'");
      next.reset(next[*index]);
    }
    node.reset(next);
  }
  if (!node.IsScalar()) fail("the path does not end at a single value");
  return node;
}

// The number of bytes the scalar starting at `begin` occupies in `text`, or none when its form is not
// one this simple scan knows (block scalars, plain scalars running over several lines).
std::optional<std::size_t> scalar_extent(const std::string& text, std::size_t begin, bool flow) {
  if (begin >= text.size()) return std::nullopt;
  const char q = text[begin];
  if (q == '|' || q == '>') return std::nullopt;
  if (q == '"' || q == '\'') {
    for (std::size_t i = begin + 1; i < text.size(); ++i) {
      if (q == '"' && text[i] == '\\') {
        ++i;
        continue;
      }
      if (text[i] == q) {
        if (q == '\'' && i + 1 < text.size() && text[i + 1] == '\'') {
          ++i;  // '' is a quote inside a single-quoted scalar
          continue;
        }
        return i + 1 - begin;
      }
      if (text[i] == '\n' || text[i] == '\r') return std::nullopt;
    }
    return std::nullopt;
  }
  std::size_t end = begin;
  while (end < text.size() && text[end] != '\n' && text[end] != '\r') {
    if (text[end] == '#' && end > begin && (text[end - 1] == ' ' || text[end - 1] == '\t')) break;
    if (flow && (text[end] == ',' || text[end] == ']' || text[end] == '}')) break;
    ++end;
  }
  while (end > begin && (text[end - 1] == ' ' || text[end - 1] == '\t')) --end;
  return end - begin;
}

}  // namespace

std::string SetDesignValue(const std::string& text, const std::string& path, const std::string& key_path,
                           const std::string& value_text) {
  YAML::Node root;
  try {
    root = YAML::Load(text);
  } catch (const YAML::Exception& e) {
    throw DesignError({path, e.mark.line + 1, e.mark.column + 1, ""}, "YAML syntax: " + e.msg);
  }
  bool flow = false;
  YAML::Node node = find_value(root, path, key_path, &flow);
  const std::string wanted = node.Scalar().rfind("source ", 0) == 0 ? "source " + value_text : value_text;
  // In place: the new value where the old one stood, then read back to make sure it is the value at the
  // path (a form the scan misjudged falls through to the rewrite below).
  const YAML::Mark at = node.Mark();
  if (at.pos >= 0) {
    const auto begin = static_cast<std::size_t>(at.pos);
    if (const auto length = scalar_extent(text, begin, flow)) {
      std::string edited = text;
      edited.replace(begin, *length, wanted);
      try {
        bool again = false;
        if (find_value(YAML::Load(edited), path, key_path, &again).Scalar() == wanted) return edited;
      } catch (const std::exception&) {
      }
    }
  }
  // The whole document written again (line numbers in later messages may then differ from the file's).
  node = wanted;
  YAML::Emitter out;
  out << root;
  return std::string(out.c_str()) + "\n";
}

}  // namespace hallway
