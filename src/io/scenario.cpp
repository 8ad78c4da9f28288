// Stress scenario files and quick grids. See include/firmcall/scenario.hpp.
#include "firmcall/io/scenario.hpp"

#include <yaml-cpp/yaml.h>

#include <algorithm>
#include <charconv>
#include <cmath>
#include <set>

#include "firmcall/book/errors.hpp"
#include "io/yaml_util.hpp"

namespace firmcall {

std::string_view to_string(FilterKey key) noexcept {
  switch (key) {
    case FilterKey::sector:
      return "sector";
    case FilterKey::country:
      return "country";
    case FilterKey::currency:
      return "currency";
    case FilterKey::ids:
      return "ids";
    case FilterKey::count:
      break;
  }
  return "";
}

namespace {

// The obligor text field a filter key compares with.
TextField field_of(FilterKey key) noexcept {
  switch (key) {
    case FilterKey::sector:
      return TextField::sector;
    case FilterKey::country:
      return TextField::country;
    case FilterKey::currency:
      return TextField::currency;
    case FilterKey::ids:
    case FilterKey::count:
      break;
  }
  return TextField::id;
}

const std::initializer_list<std::string_view> kTopKeys = {"description", "scenarios"};
const std::initializer_list<std::string_view> kScenarioKeys = {"name", "description", "shocks"};
const std::initializer_list<std::string_view> kShockKeys = {
    "filter",        "equity_change",        "equity_vol_multiplier", "equity_vol_add_points",
    "rate_shift_bp", "default_point_change", "horizon_years"};
const std::initializer_list<std::string_view> kFilterKeys = {"sector", "country", "currency", "ids"};

// The numeric keys of a shock, in the order they are checked, each with its constraint.
struct ShockValue {
  const char* key;
  double Shock::*field;
  bool (*ok)(double);
  const char* constraint;
};
constexpr ShockValue kShockValues[] = {
    {"equity_change", &Shock::equity_change, [](double v) { return v > -1.0; },
     "must be greater than -1 (a relative change of -1 or less makes the equity value non-positive)"},
    {"equity_vol_multiplier", &Shock::equity_vol_multiplier, [](double v) { return v > 0.0; },
     "must be positive (a factor on equity volatility)"},
    {"equity_vol_add_points", &Shock::equity_vol_add_points, [](double v) { return std::fabs(v) <= 1000.0; },
     "volatility points (5 means +0.05) between -1000 and 1000"},
    {"rate_shift_bp", &Shock::rate_shift_bp, [](double v) { return std::fabs(v) <= 10000.0; },
     "basis points (25 means +0.0025) between -10000 and 10000"},
    {"default_point_change", &Shock::default_point_change, [](double v) { return v > -1.0; },
     "must be greater than -1 (a relative change of -1 or less makes the default point non-positive)"},
    {"horizon_years", &Shock::horizon_years, [](double v) { return v > 0.0 && v <= 100.0; },
     "must be positive years, at most 100"},
};

std::string shortest(double v) {
  char buf[32];
  const auto r = std::to_chars(buf, buf + sizeof buf, v);
  return std::string(buf, r.ptr);
}

// Reads one scenario file, keeping the file name and the context ("scenario 'x', shock 2") for
// every message.
class Reader {
 public:
  explicit Reader(const std::string& origin) : origin_(origin) {}

  [[noreturn]] void fail(const YAML::Node& node, const std::string& context, const std::string& what) const {
    throw InputError(located(origin_, detail::yaml_line(node), context + ": " + what));
  }

  double number(const YAML::Node& node, const std::string& context, std::string_view key) const {
    const std::string k = "key '" + std::string(key) + "'";
    if (!node.IsScalar()) fail(node, context, k + ": expected a number");
    double v = 0.0;
    bool ok = false;
    try {
      v = node.as<double>();
      ok = std::isfinite(v);
    } catch (const YAML::Exception&) {
      ok = false;
    }
    if (!ok) fail(node, context, k + ": expected a finite number, got '" + node.Scalar().substr(0, 40) + "'");
    return v;
  }

  std::string text(const YAML::Node& node, const std::string& context, std::string_view key) const {
    if (!node.IsScalar()) fail(node, context, "key '" + std::string(key) + "': expected a single value");
    return node.Scalar();
  }

  void check_keys(const YAML::Node& node, std::initializer_list<std::string_view> allowed,
                  const std::string& context) const {
    detail::yaml_check_keys(node, allowed, origin_, context);
  }

  FilterValues filter_values(const YAML::Node& node, const std::string& context, FilterKey key) const {
    FilterValues fv;
    fv.line = std::max<std::size_t>(detail::yaml_line(node), 1);
    const std::string k = "key '" + std::string(to_string(key)) + "'";
    const auto add = [&](const YAML::Node& item) {
      if (!item.IsScalar() || item.Scalar().empty()) {
        fail(item, context, k + ": expected a non-empty name or a list of names");
      }
      fv.names.push_back(item.Scalar());
      fv.lines.push_back(detail::yaml_line(item));
    };
    if (node.IsSequence()) {
      if (node.size() == 0)
        fail(node, context, k + ": empty list (name at least one " + std::string(to_string(key)) + ")");
      for (const auto& item : node) add(item);
    } else {
      add(node);
    }
    fv.sorted = fv.names;
    std::sort(fv.sorted.begin(), fv.sorted.end());
    fv.sorted.erase(std::unique(fv.sorted.begin(), fv.sorted.end()), fv.sorted.end());
    return fv;
  }

  ScenarioShock shock(const YAML::Node& node, const std::string& context) const {
    ScenarioShock out;
    out.line = detail::yaml_line(node);
    if (!node.IsMap()) fail(node, context, "expected a map of shock: value");
    check_keys(node, kShockKeys, context);
    bool changes = false;
    for (const ShockValue& k : kShockValues) {
      if (const auto n = node[k.key]) {
        const double v = number(n, context, k.key);
        if (!k.ok(v))
          fail(n, context, "key '" + std::string(k.key) + "': " + k.constraint + ", got " + shortest(v));
        out.shock.*k.field = v;
        changes = true;
      }
    }
    if (const auto f = node["filter"]) {
      const std::string fctx = context + ", filter";
      if (!f.IsMap() || f.size() == 0) {
        fail(f, context,
             "key 'filter': empty filter (give sector, country, currency or ids; leave 'filter' out to shock "
             "every obligor)");
      }
      check_keys(f, kFilterKeys, fctx);
      for (std::size_t i = 0; i < kFilterKeyCount; ++i) {
        const auto key = static_cast<FilterKey>(i);
        if (const auto n = f[std::string(to_string(key))]) out.filter.keys[i] = filter_values(n, fctx, key);
      }
    }
    if (!changes) {
      fail(node, context,
           "no change given (give at least one of equity_change, equity_vol_multiplier, "
           "equity_vol_add_points, "
           "rate_shift_bp, default_point_change, horizon_years)");
    }
    return out;
  }

  ScenarioSet read(const std::string& yaml_text) const {
    ScenarioSet set;
    set.origin = origin_;
    const YAML::Node root = detail::yaml_load(yaml_text, origin_);
    if (!root.IsMap()) {
      throw InputError(located(origin_, detail::yaml_line(root), "expected a map with a 'scenarios' list"));
    }
    check_keys(root, kTopKeys, "scenario file");
    if (root["description"]) set.description = text(root["description"], "scenario file", "description");
    const YAML::Node list = root["scenarios"];
    if (!list) throw InputError(located(origin_, 0, "missing key 'scenarios' (the list of scenarios)"));
    if (!list.IsSequence() || list.size() == 0) {
      fail(list, "scenario file", "key 'scenarios': expected a non-empty list of scenarios");
    }
    std::set<std::string> names;
    std::size_t index = 0;
    for (const auto& node : list) {
      ++index;
      std::string context = "scenario " + std::to_string(index);
      if (!node.IsMap()) fail(node, context, "expected a map with name and shocks");
      check_keys(node, kScenarioKeys, context);
      Scenario sc;
      sc.line = detail::yaml_line(node);
      if (!node["name"]) fail(node, context, "missing key 'name'");
      sc.name = text(node["name"], context, "name");
      if (sc.name.find_first_not_of(" \t") == std::string::npos) {
        fail(node["name"], context, "key 'name': must not be empty");
      }
      if (!names.insert(sc.name).second) {
        fail(node["name"], context, "key 'name': '" + sc.name + "' is used by an earlier scenario");
      }
      context = "scenario '" + sc.name + "'";
      if (node["description"]) sc.description = text(node["description"], context, "description");
      const YAML::Node shocks = node["shocks"];
      if (!shocks) fail(node, context, "missing key 'shocks' (the list of shocks)");
      if (!shocks.IsSequence() || shocks.size() == 0) {
        fail(shocks, context, "key 'shocks': expected a non-empty list of shocks");
      }
      std::size_t k = 0;
      for (const auto& s : shocks) {
        ++k;
        sc.shocks.push_back(shock(s, context + ", shock " + std::to_string(k)));
      }
      set.scenarios.push_back(std::move(sc));
    }
    return set;
  }

 private:
  const std::string& origin_;
};

}  // namespace

bool FilterValues::contains(std::string_view name) const {
  return std::binary_search(sorted.begin(), sorted.end(), name,
                            [](std::string_view a, std::string_view b) { return a < b; });
}

bool ShockFilter::any() const noexcept {
  return std::any_of(keys.begin(), keys.end(), [](const FilterValues& f) { return f.used(); });
}

bool ShockFilter::matches(const ObligorRecord& rec) const {
  for (std::size_t i = 0; i < kFilterKeyCount; ++i) {
    const FilterValues& f = keys[i];
    if (!f.used()) continue;
    if (!f.contains(rec.get(field_of(static_cast<FilterKey>(i))))) return false;
  }
  return true;
}

ShockEffect Scenario::effect_for(const ObligorRecord& rec) const {
  ShockEffect e;
  for (const ScenarioShock& s : shocks) {
    if (s.filter.matches(rec)) e.add(s.shock);
  }
  return e;
}

ScenarioSet parse_scenarios(const std::string& yaml_text, const std::string& origin) {
  return Reader(origin).read(yaml_text);
}

ScenarioSet load_scenarios(const std::string& path) {
  return parse_scenarios(detail::read_text_file(path, kMaxScenarioFileBytes, "a scenario file"), path);
}

void check_filters(const ScenarioSet& set, const Book& book) {
  // Names present in the book, per filter key.
  std::array<std::vector<std::string>, kFilterKeyCount> present;
  for (std::size_t i = 0; i < kFilterKeyCount; ++i) {
    const TextField field = field_of(static_cast<FilterKey>(i));
    auto& names = present[i];
    names.reserve(book.obligors.size());
    for (const auto& rec : book.obligors) {
      if (!rec.get(field).empty()) names.push_back(rec.get(field));
    }
    std::sort(names.begin(), names.end());
    names.erase(std::unique(names.begin(), names.end()), names.end());
  }
  for (const Scenario& sc : set.scenarios) {
    std::size_t k = 0;
    for (const ScenarioShock& s : sc.shocks) {
      ++k;
      for (std::size_t i = 0; i < kFilterKeyCount; ++i) {
        const FilterValues& f = s.filter.keys[i];
        const auto key = static_cast<FilterKey>(i);
        for (std::size_t j = 0; j < f.names.size(); ++j) {
          if (std::binary_search(present[i].begin(), present[i].end(), f.names[j])) continue;
          std::string msg = "scenario '" + sc.name + "', shock " + std::to_string(k) + ", filter: key '" +
                            std::string(to_string(key)) + "': '" + f.names[j] + "' matches no obligor of " +
                            book.origin;
          // Two edits can turn any two-letter name into any other: suggest only for longer ones.
          const std::string hint = f.names[j].size() > 2 ? detail::closest_name(f.names[j], present[i]) : "";
          if (!hint.empty()) msg += " (did you mean '" + hint + "'?)";
          throw InputError(located(set.origin, f.lines[j], msg));
        }
      }
      // Every name matches some obligor, but together the keys might still exclude all of them.
      if (s.filter.any() && std::none_of(book.obligors.begin(), book.obligors.end(),
                                         [&](const ObligorRecord& rec) { return s.filter.matches(rec); })) {
        throw InputError(located(set.origin, s.line,
                                 "scenario '" + sc.name + "', shock " + std::to_string(k) +
                                     ", filter: no obligor of " + book.origin +
                                     " matches every key at once"));
      }
    }
  }
}

std::vector<Scenario> grid_scenarios(const std::vector<double>& equity_changes,
                                     const std::vector<double>& vol_multipliers) {
  std::vector<Scenario> out;
  for (std::size_t r = 0; r < equity_changes.size(); ++r) {
    for (std::size_t c = 0; c < vol_multipliers.size(); ++c) {
      Scenario sc;
      char buf[96];
      std::snprintf(buf, sizeof buf, "equity %+g%% vol x%g", 100.0 * equity_changes[r], vol_multipliers[c]);
      sc.name = buf;
      ScenarioShock s;
      s.shock.equity_change = equity_changes[r];
      s.shock.equity_vol_multiplier = vol_multipliers[c];
      sc.shocks.push_back(s);
      sc.grid_row = static_cast<int>(r);
      sc.grid_column = static_cast<int>(c);
      out.push_back(std::move(sc));
    }
  }
  return out;
}

}  // namespace firmcall
