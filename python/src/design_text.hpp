// python/src/design_text.hpp: a design as its YAML text, the way `hallway sweep` keeps it: loaded from
// the text, edited in place by key path (SetDesignValue, design_loader.hpp), so that every message
// cites a line of the user's own file.
#pragma once

#include <string>

#include "hallway/design.hpp"

namespace hallway::python {

struct DesignText {
  std::string text;
  std::string path;  // in messages and in the results' "design" key
  Design design;     // `text` loaded
};

// Loads the file as LoadDesign does (a regular file below kMaxDesignBytes), keeping its text.
DesignText DesignFromFile(const std::string& path);
// Loads `text`; `path` names it in messages.
DesignText DesignFromString(const std::string& text, const std::string& path);
// `d` with the value at `key_path` replaced by `value_text` (the value written as in a design file,
// "-0.7 V"); the changed text is loaded again, so a bad value throws DesignError and leaves `d` as it was.
void SetValue(DesignText& d, const std::string& key_path, const std::string& value_text);
// The value at `key_path` as written in the text, without quotes (a source's bias without "source ").
// Throws DesignError when the path does not exist or the value is written in a form that cannot be read
// in place (a block scalar, a plain value over several lines).
std::string GetValue(const DesignText& d, const std::string& key_path);

}  // namespace hallway::python
