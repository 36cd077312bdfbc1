// A design kept as its text; see design_text.hpp.
#include "design_text.hpp"

#include <fstream>
#include <sstream>

#include "hallway/design_loader.hpp"

namespace hallway::python {
namespace {

// A plain scalar no design value starts or ends with ('~' alone is YAML's null; no number, unit or
// name of a design begins with it).
std::string sentinel_for(const std::string& text) {
  std::string s = "~hallway~value~";
  while (text.find(s) != std::string::npos) s.push_back('~');
  return s;
}

// The text of a scalar as YAML reads it: quotes removed ('' in single quotes, \" and \\ in double).
std::string unquoted(const std::string& raw) {
  if (raw.size() < 2 || (raw.front() != '\'' && raw.front() != '"') || raw.back() != raw.front()) return raw;
  const std::string inner = raw.substr(1, raw.size() - 2);
  std::string out;
  for (std::size_t i = 0; i < inner.size(); ++i) {
    if (raw.front() == '\'' && inner[i] == '\'' && i + 1 < inner.size() && inner[i + 1] == '\'') ++i;
    if (raw.front() == '"' && inner[i] == '\\' && i + 1 < inner.size()) ++i;
    out += inner[i];
  }
  return out;
}

}  // namespace

DesignText DesignFromFile(const std::string& path) {
  DesignText d;
  d.design = LoadDesign(path);  // refuses what is not a small regular file before reading it
  std::ifstream in(path, std::ios::binary);
  std::stringstream ss;
  ss << in.rdbuf();
  d.text = ss.str();
  d.path = path;
  return d;
}

DesignText DesignFromString(const std::string& text, const std::string& path) {
  return {text, path, LoadDesignFromString(text, path)};
}

void SetValue(DesignText& d, const std::string& key_path, const std::string& value_text) {
  std::string changed = SetDesignValue(d.text, d.path, key_path, value_text);
  Design loaded = LoadDesignFromString(changed, d.path);
  d.text = std::move(changed);
  d.design = std::move(loaded);
}

// SetDesignValue writes a sentinel where the value stands, every other byte kept: the bytes of the
// original text between the common beginning and the common end are the value.
std::string GetValue(const DesignText& d, const std::string& key_path) {
  const std::string mark = sentinel_for(d.text);
  const std::string edited = SetDesignValue(d.text, d.path, key_path, mark);
  const std::string& t = d.text;
  std::size_t head = 0;
  while (head < t.size() && head < edited.size() && t[head] == edited[head]) ++head;
  std::size_t tail = 0;
  while (tail < t.size() - head && tail < edited.size() - head && t[t.size() - 1 - tail] == edited[edited.size() - 1 - tail])
    ++tail;
  const std::string written = edited.substr(head, edited.size() - head - tail);
  const bool source = written == "source " + mark;  // a quoted source bias, replaced whole
  if (written != mark && !source)
    throw DesignError({d.path, 0, 0, key_path},
                      "the value is written in a form that cannot be read in place (a block scalar or a plain value "
                      "over several lines)");
  std::string value = unquoted(t.substr(head, t.size() - head - tail));
  if (source && value.rfind("source ", 0) == 0) value.erase(0, 7);
  return value;
}

}  // namespace hallway::python
