// hallway._core: the compiled part of the Python module `hallway` (python/hallway/__init__.py wraps it
// with keyword options, docstrings and attribute access). Designs are kept as text and edited by key
// path; check/solve/noise/paths return the document the matching command writes with --json, as plain
// dicts, lists and NumPy arrays; map adds the density grid. Every solve runs with the GIL released.
#include <pybind11/functional.h>
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <cmath>
#include <string>

#include "commands.hpp"
#include "design_text.hpp"
#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/units.hpp"

namespace py = pybind11;
using nlohmann::json;

namespace hallway::python {
namespace {

// The exception classes, created once at import (module.cpp's PYBIND11_MODULE) and kept for the life of
// the interpreter.
struct Exceptions {
  py::handle error, design_error, resource_limit, usage_error, internal_error;
};
Exceptions& exceptions() {
  static Exceptions e;
  return e;
}

py::handle new_exception(py::module_& m, const char* name, py::handle bases, const char* doc) {
  const std::string full = std::string("hallway.") + name;
  PyObject* cls = PyErr_NewExceptionWithDoc(full.c_str(), doc, bases.ptr(), nullptr);
  if (!cls) throw py::error_already_set();
  m.add_object(name, py::handle(cls));
  return cls;
}

// A dict as a hallway.Record (python/hallway/__init__.py), as every result's objects are.
py::object record(const py::dict& d) {
  return py::module_::import("hallway").attr("Record")(d);
}

py::object location_dict(const SourceLocation& where) {
  py::dict d;
  d["file"] = where.file;
  d["line"] = where.line;
  d["column"] = where.column;
  d["key"] = where.key_path;
  return record(d);
}

void raise_with(py::handle cls, const std::string& message, const py::dict& attributes) {
  py::object instance = py::reinterpret_borrow<py::object>(cls)(message);
  for (auto item : attributes) instance.attr(item.first) = item.second;
  PyErr_SetObject(cls.ptr(), instance.ptr());
}

void raise_design_error(const std::string& message, const SourceLocation& where, py::list findings) {
  py::dict a = location_dict(where).cast<py::dict>();
  a["findings"] = findings;
  raise_with(exceptions().design_error, message, a);
}

// The grid's figures (zero for a solve that did not converge).
void raise_resource_limit(const std::string& message, const GridTooLarge* grid) {
  py::dict a;
  a["nx"] = grid ? grid->nx : 0;
  a["ny"] = grid ? grid->ny : 0;
  a["cell_m"] = grid ? grid->cell_m : 0.0;
  a["need_bytes"] = grid ? grid->need_bytes : 0;
  a["limit_bytes"] = grid ? grid->limit_bytes : 0;
  a["fitting_cell_m"] = grid ? grid->fitting_cell_m : 0.0;
  raise_with(exceptions().resource_limit, message, a);
}

void translate(std::exception_ptr p) {
  try {
    if (p) std::rethrow_exception(p);
  } catch (const DesignError& e) {
    py::list one;
    one.append(record(py::dict(py::arg("code") = "design-error", py::arg("severity") = "error",
                               py::arg("message") = e.message(), py::arg("where") = location_dict(e.where()))));
    raise_design_error(e.what(), e.where(), one);
  } catch (const DesignFindings& e) {
    py::list all;
    for (const Finding& f : e.errors)
      all.append(record(py::dict(py::arg("code") = f.code, py::arg("severity") = ToString(f.severity),
                                 py::arg("message") = f.message, py::arg("where") = location_dict(f.where))));
    raise_design_error(e.what(), e.errors.front().where, all);
  } catch (const ResourceLimit& e) {
    raise_resource_limit(e.what(), e.grid ? &*e.grid : nullptr);
  } catch (const GridTooLarge& e) {
    raise_resource_limit(e.what(), &e);
  } catch (const UsageError& e) {
    PyErr_SetString(exceptions().usage_error.ptr(), e.what());
  } catch (const InternalError& e) {
    PyErr_SetString(exceptions().internal_error.ptr(), e.what());
  }
}

// A JSON array of numbers only (a vector or, nested once, a matrix with rows of one length), or none.
bool numeric_row(const json& j, bool* any_float) {
  if (!j.is_array() || j.empty()) return false;
  for (const json& x : j) {
    if (!x.is_number() || x.is_boolean()) return false;
    *any_float = *any_float || x.is_number_float();
  }
  return true;
}

py::object numeric_array(const json& j) {
  bool any_float = false;
  if (numeric_row(j, &any_float)) {
    if (!any_float) return py::array_t<long long>(py::cast(j.get<std::vector<long long>>()));
    return py::array_t<double>(py::cast(j.get<std::vector<double>>()));
  }
  const std::size_t cols = j.front().size();
  for (const json& row : j)
    if (!numeric_row(row, &any_float) || row.size() != cols) return py::none();
  py::array_t<double> a({j.size(), cols});
  auto w = a.mutable_unchecked<2>();
  for (std::size_t r = 0; r < j.size(); ++r)
    for (std::size_t c = 0; c < cols; ++c) w(static_cast<py::ssize_t>(r), static_cast<py::ssize_t>(c)) = j[r][c].get<double>();
  return a;
}

// JSON to Python: objects to dicts, arrays of numbers to NumPy arrays (matrices two-dimensional),
// other arrays to lists. Numbers keep their type and every bit.
py::object to_python(const json& j) {
  switch (j.type()) {
    case json::value_t::null: return py::none();
    case json::value_t::boolean: return py::bool_(j.get<bool>());
    case json::value_t::number_integer: return py::int_(j.get<long long>());
    case json::value_t::number_unsigned: return py::int_(j.get<unsigned long long>());
    case json::value_t::number_float: return py::float_(j.get<double>());
    case json::value_t::string: return py::str(j.get<std::string>());
    case json::value_t::object: {
      py::dict d;
      for (const auto& [key, value] : j.items()) d[py::str(key)] = to_python(value);
      return d;
    }
    case json::value_t::array: {
      if (!j.empty() && (j.front().is_number() || j.front().is_array()) && !j.front().is_boolean())
        if (py::object a = numeric_array(j); !a.is_none()) return a;
      py::list l;
      for (const json& x : j) l.append(to_python(x));
      return l;
    }
    default: return py::none();
  }
}

py::object optional_number(const std::optional<double>& x) {
  return x ? py::object(py::float_(*x)) : py::object(py::none());
}

// The keys of `hallway map --json` (cli/map_command.cpp) and the density grid of `map --csv` as arrays:
// cell centres x_m (nx) and y_m (ny), density_per_m2, filling and energy_over_fermi (ny x nx).
py::dict map_result(const Design& d, const MapResult& m) {
  py::dict doc;
  doc["hallway_map"] = 1;
  doc["design"] = d.path;
  py::list gates, constrictions;
  for (const GateMap& g : m.gates)
    gates.append(py::dict(py::arg("name") = g.name, py::arg("wide_depletion_V") = g.wide_depletion_V,
                          py::arg("depletion_V") = optional_number(g.depletion_V),
                          py::arg("lateral_depletion_m") = optional_number(g.lateral_depletion_m),
                          py::arg("drift_velocity_m_per_s") = optional_number(g.drift_velocity_m_per_s)));
  for (const ConstrictionMap& c : m.constrictions)
    constrictions.append(py::dict(py::arg("name") = c.name, py::arg("gap_m") = c.gap_m,
                                  py::arg("saddle_m") = py::array_t<double>(py::cast(std::vector<double>{c.saddle.x, c.saddle.y})),
                                  py::arg("saddle_density_per_m2") = c.saddle_density_per_m2,
                                  py::arg("pinch_off_density_zero_V") = optional_number(c.pinch_off_V),
                                  py::arg("pinch_off_bare_V") = optional_number(c.bare_pinch_off_V)));
  doc["gates"] = gates;
  doc["constrictions"] = constrictions;
  const auto& s = m.map.stats;
  doc["solver"] = py::dict(
      py::arg("grid") = py::array_t<long long>(py::cast(std::vector<long long>{m.map.nx, m.map.ny})),
      py::arg("cell_m") = m.map.cell_m, py::arg("operator_applications") = s.operator_applications,
      py::arg("residual") = s.residual, py::arg("converged") = s.converged, py::arg("solves") = m.solves,
      py::arg("total_operator_applications") = m.operator_applications, py::arg("seconds") = m.seconds);
  const auto nx = static_cast<py::ssize_t>(m.map.nx), ny = static_cast<py::ssize_t>(m.map.ny);
  py::array_t<double> x(nx), y(ny), n({ny, nx}), nu({ny, nx}), u({ny, nx});
  for (py::ssize_t i = 0; i < nx; ++i) x.mutable_at(i) = m.map.x0_m + static_cast<double>(i) * m.map.cell_m;
  for (py::ssize_t j = 0; j < ny; ++j) y.mutable_at(j) = m.map.y0_m + static_cast<double>(j) * m.map.cell_m;
  const double scale = constants::kPlanck_Js / (constants::kElementaryCharge_C * std::abs(d.conditions.field_T));
  for (py::ssize_t j = 0; j < ny; ++j)
    for (py::ssize_t i = 0; i < nx; ++i) {
      const auto k = static_cast<std::size_t>(j * nx + i);
      n.mutable_at(j, i) = m.map.density_per_m2[k];
      nu.mutable_at(j, i) = m.map.density_per_m2[k] * scale;
      u.mutable_at(j, i) = m.map.energy_over_fermi[k];
    }
  doc["x_m"] = x;
  doc["y_m"] = y;
  doc["density_per_m2"] = n;
  doc["filling"] = nu;
  doc["energy_over_fermi"] = u;
  return doc;
}

RunOptions run_options(bool fast, const std::string& max_memory) {
  return {fast, ParseMemory(max_memory)};
}

// A callback into Python from a solve that runs without the GIL. The callable is borrowed: the caller's
// argument keeps it alive for the whole call.
std::function<void(int, int, const std::string&)> progress_callback(const py::object& progress) {
  if (progress.is_none()) return {};
  const py::handle callable = progress;
  return [callable](int step, int total, const std::string& what) {
    const py::gil_scoped_acquire gil;
    callable(step, total, what);
  };
}

// Design.set: the value as text; a Python number as its shortest exact form (repr).
void set_value(DesignText& d, const std::string& key_path, const py::object& value) {
  if (py::isinstance<py::str>(value)) return SetValue(d, key_path, value.cast<std::string>());
  if (py::isinstance<py::bool_>(value) || !(py::isinstance<py::int_>(value) || py::isinstance<py::float_>(value)))
    throw py::type_error("Design.set: the value must be a str such as '-0.7 V' or a number");
  SetValue(d, key_path, py::repr(value).cast<std::string>());
}

void bind_design(py::module_& m) {
  py::class_<DesignText>(m, "Design", "A design: its YAML text, loaded and validated (see hallway.Design).")
      .def_static("from_file", [](const py::object& path) {
        return DesignFromFile(py::module_::import("os").attr("fspath")(path).cast<std::string>());
      }, py::arg("path"), "Load a design file (YAML); path is a str or a pathlib.Path.")
      .def_static("from_string", &DesignFromString, py::arg("text"), py::arg("path") = "<string>",
                  "Load a design from its text; `path` names it in messages.")
      .def("set", &set_value, py::arg("key_path"), py::arg("value"),
           "Set the value at key_path (e.g. 'gates.QL.voltage') to value, written as in a design file ('-0.7 V');\n"
           "a bare number (int or float) is written as Python's repr of it, for values without a unit.\n"
           "The changed text is loaded again: a bad value raises DesignError and leaves the design as it was.")
      .def("get", &GetValue, py::arg("key_path"), "The value at key_path as written in the design ('-0.7 V').")
      .def_readonly("text", &DesignText::text, "The YAML text, with every change made by set().")
      .def_readonly("path", &DesignText::path, "The file name used in messages and in the results' 'design' key.")
      .def_property_readonly("name", [](const DesignText& d) { return d.design.name; }, "The design's name.")
      .def("copy", [](const DesignText& d) { return d; }, "An independent copy.")
      .def("__copy__", [](const DesignText& d) { return d; })
      .def("__deepcopy__", [](const DesignText& d, py::dict) { return d; }, py::arg("memo"))
      .def("__repr__", [](const DesignText& d) { return "<hallway.Design " + d.path + ">"; });
}

// `work` (no Python object touched) with the GIL released; its result converted with the GIL held.
template <class Work>
py::object released(const Work& work) {
  json doc;
  {
    const py::gil_scoped_release release;
    doc = work();
  }
  return to_python(doc);
}

void bind_commands(py::module_& m) {
  // Options are parsed and the design copied with the GIL held; the work runs without it.
  m.def("check", [](const DesignText& d, bool gate_settings) {
    return released([design = d.design, gate_settings] { return CheckDocument(design, gate_settings); });
  }, py::arg("design"), py::arg("gate_settings"));
  m.def("solve", [](const DesignText& d, bool fast, bool field_reversed, const std::string& max_memory) {
    return released([run = run_options(fast, max_memory), design = d.design, field_reversed] {
      return SolveDocument(design, run, field_reversed);
    });
  }, py::arg("design"), py::arg("fast"), py::arg("field_reversed"), py::arg("max_memory"));
  m.def("noise", [](const DesignText& d, bool fast, const NoiseRun& nr, const std::string& max_memory) {
    return released([run = run_options(fast, max_memory), design = d.design, nr] {
      return NoiseDocument(design, run, nr);
    });
  }, py::arg("design"), py::arg("fast"), py::arg("options"), py::arg("max_memory"));
  m.def("paths", [](const DesignText& d, bool fast, const PathsRun& pr, const std::string& max_memory) {
    return released([run = run_options(fast, max_memory), design = d.design, pr] {
      return PathsDocument(design, run, pr);
    });
  }, py::arg("design"), py::arg("fast"), py::arg("options"), py::arg("max_memory"));
  m.def("map", [](const DesignText& d, const std::string& grid, const std::string& max_memory,
                  const py::object& progress) {
    const std::size_t bytes = ParseMemory(max_memory);
    const Design design = d.design;
    const auto callback = progress_callback(progress);
    MapResult result;
    {
      const py::gil_scoped_release release;
      result = RunMapSearch(design, grid, bytes, callback);
    }
    return map_result(design, result);
  }, py::arg("design"), py::arg("grid"), py::arg("max_memory"), py::arg("progress"));
}

void bind_options(py::module_& m) {
  py::class_<NoiseRun>(m, "NoiseRun")
      .def(py::init<>())
      .def_readwrite("field_reversed", &NoiseRun::field_reversed)
      .def_readwrite("phase_rad", &NoiseRun::phase_rad)
      .def_readwrite("target_sigmas", &NoiseRun::target_sigmas)
      .def_readwrite("collider_model", &NoiseRun::collider_model);
  py::class_<PathsRun>(m, "PathsRun")
      .def(py::init<>())
      .def_readwrite("target", &PathsRun::target)
      .def_readwrite("gate_limit", &PathsRun::gate_limit)
      .def_readwrite("relaxation_length", &PathsRun::relaxation_length);
  m.def("parse_quantity", [](const std::string& text) {
    try {
      const units::Quantity q = units::ParseQuantity(text);
      return py::make_tuple(q.value_si, units::ToString(q.dimension));
    } catch (const units::UnitError& e) {
      throw UsageError(e.what());
    }
  }, py::arg("text"));
}

}  // namespace
}  // namespace hallway::python

PYBIND11_MODULE(_core, m) {
  using namespace hallway::python;
  m.doc() = "The compiled part of hallway (use the package `hallway`).";
  Exceptions& e = exceptions();
  e.error = new_exception(m, "Error", PyExc_Exception, "Every error hallway raises.");
  e.design_error = new_exception(m, "DesignError", e.error,
                                 "A mistake in a design: the message starts with file:line:column: key; the "
                                 "attributes file, line, column, key and findings say where and what.");
  e.resource_limit = new_exception(m, "ResourceLimit", e.error,
                                   "The memory guard refused a grid (need_bytes, limit_bytes, fitting_cell_m) or an "
                                   "electrostatic solve stopped at its iteration bound.");
  const py::tuple usage_bases = py::make_tuple(e.error, py::handle(PyExc_ValueError));
  e.usage_error = new_exception(m, "UsageError", usage_bases, "An option with a wrong value or unit.");
  e.internal_error = new_exception(m, "InternalError", e.error, "A value that is not finite appeared in a result.");
  py::register_exception_translator(&translate);
  bind_design(m);
  bind_commands(m);
  bind_options(m);
}
