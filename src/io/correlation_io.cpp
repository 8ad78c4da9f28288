// Sector correlation files. See include/firmcall/correlation_io.hpp.
#include "firmcall/io/correlation_io.hpp"

#include "firmcall/book/errors.hpp"
#include "io/yaml_util.hpp"

namespace firmcall {

std::optional<std::size_t> CorrelationFile::find(std::string_view sector) const {
  for (std::size_t i = 0; i < factors.size(); ++i) {
    if (factors[i].sector == sector) return i;
  }
  return std::nullopt;
}

namespace {

constexpr std::size_t kMaxFactors = 1000;

[[noreturn]] void fail(const std::string& origin, const YAML::Node& node, const std::string& what) {
  throw InputError(located(origin, detail::yaml_line(node), what));
}

}  // namespace

CorrelationFile parse_correlation_file(const std::string& text, const std::string& origin) {
  CorrelationFile file;
  file.origin = origin;
  const YAML::Node root = detail::yaml_load(text, origin);
  if (!root.IsMap()) fail(origin, root, "expected a map with a 'factors' list");
  detail::yaml_check_keys(root, {"description", "factors", "factor_correlation"}, origin, "correlation file");
  if (root["description"]) file.description = detail::yaml_string(root["description"], origin, "description");
  const YAML::Node list = root["factors"];
  if (!list) throw InputError(located(origin, 0, "missing key 'factors' (the list of sector factors)"));
  if (!list.IsSequence() || list.size() == 0) {
    fail(origin, list,
         "key 'factors': expected a non-empty list such as [{sector: Energy, asset_correlation: 0.2}]");
  }
  if (list.size() > kMaxFactors) {
    fail(origin, list, "key 'factors': at most " + std::to_string(kMaxFactors) + " factors");
  }
  for (std::size_t i = 0; i < list.size(); ++i) {
    const YAML::Node item = list[i];
    const std::string where = "factor " + std::to_string(i + 1);
    detail::yaml_check_keys(item, {"sector", "asset_correlation"}, origin, where);
    SectorFactor f;
    f.line = detail::yaml_line(item);
    if (!item["sector"]) fail(origin, item, where + ": missing key 'sector'");
    f.sector = detail::yaml_string(item["sector"], origin, "sector");
    if (f.sector.empty()) fail(origin, item["sector"], where + ": key 'sector': empty name");
    if (const auto prev = file.find(f.sector)) {
      fail(origin, item["sector"],
           where + ": sector '" + f.sector + "' is listed twice (first on line " +
               std::to_string(file.factors[*prev].line) + ")");
    }
    if (const YAML::Node rho = item["asset_correlation"]) {
      const double v = detail::yaml_number(rho, origin, "asset_correlation");
      if (!(v >= 0.0 && v < 1.0)) {
        fail(origin, rho,
             where + " (" + f.sector +
                 "): key 'asset_correlation': must be a decimal in [0, 1) (0.2 means 20%), got " +
                 rho.Scalar());
      }
      f.asset_correlation = v;
    }
    file.factors.push_back(std::move(f));
  }
  const std::size_t n = file.factors.size();
  if (const YAML::Node m = root["factor_correlation"]) {
    file.matrix_line = detail::yaml_line(m);
    if (!m.IsSequence() || m.size() != n) {
      fail(origin, m,
           "factor_correlation: expected " + std::to_string(n) +
               " rows (one per factor, in the order of 'factors'), got " +
               (m.IsSequence() ? std::to_string(m.size()) : std::string("no list")));
    }
    file.matrix.reserve(n * n);
    for (std::size_t i = 0; i < n; ++i) {
      const YAML::Node row = m[i];
      if (!row.IsSequence() || row.size() != n) {
        fail(origin, row,
             "factor_correlation: row " + std::to_string(i + 1) + " (" + file.factors[i].sector +
                 "): expected " + std::to_string(n) + " numbers, got " +
                 (row.IsSequence() ? std::to_string(row.size()) : std::string("no list")));
      }
      for (std::size_t j = 0; j < n; ++j)
        file.matrix.push_back(detail::yaml_number(row[j], origin, "factor_correlation"));
    }
    const CorrelationCheck check = cholesky_of_correlation(file.matrix, n, file.cholesky);
    if (!check.ok()) {
      std::string where = "factor_correlation: " + check.describe();
      if (check.status != CorrelationStatus::not_positive_definite &&
          check.status != CorrelationStatus::failed && check.status != CorrelationStatus::not_square) {
        where +=
            " (row " + file.factors[check.row].sector + ", column " + file.factors[check.column].sector + ")";
        throw InputError(located(origin, detail::yaml_line(m[check.row]), where));
      }
      throw InputError(located(origin, file.matrix_line, where));
    }
  } else {
    file.cholesky = single_factor();
  }
  return file;
}

CorrelationFile load_correlation_file(const std::string& path) {
  return parse_correlation_file(detail::read_text_file(path, kMaxCorrelationFileBytes, "a correlation file"),
                                path);
}

}  // namespace firmcall
