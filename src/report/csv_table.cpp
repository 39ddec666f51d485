#include "tumbletrace/report/csv_table.hpp"

#include <fmt/format.h>

#include <charconv>
#include <cmath>
#include <fstream>
#include <sstream>

#include "tumbletrace/core/error.hpp"

namespace tumbletrace {
namespace {

std::vector<std::string> SplitRow(const std::string& line) {
  std::vector<std::string> cells;
  std::string cell;
  std::istringstream in(line);
  while (std::getline(in, cell, ',')) cells.push_back(cell);
  if (!line.empty() && line.back() == ',') cells.emplace_back();
  return cells;
}

}  // namespace

CsvTable CsvTable::Read(const std::filesystem::path& path) {
  std::ifstream in(path);
  if (!in) throw InputError(fmt::format("{}: cannot be read", path.string()));
  CsvTable table;
  table.path_ = path;
  std::string line;
  if (!std::getline(in, line)) throw InputError(fmt::format("{}: empty, expected a header row", path.string()));
  if (!line.empty() && line.back() == '\r') line.pop_back();
  const std::vector<std::string> header = SplitRow(line);
  for (const std::string& name : header) table.columns_[name];
  int line_number = 1;
  while (std::getline(in, line)) {
    ++line_number;
    if (!line.empty() && line.back() == '\r') line.pop_back();
    if (line.empty()) continue;
    const std::vector<std::string> cells = SplitRow(line);
    if (cells.size() != header.size()) {
      throw InputError(fmt::format("{}:{}: expected {} cells as in the header, got {}", path.string(),
                                   line_number, header.size(), cells.size()));
    }
    for (size_t i = 0; i < cells.size(); ++i) {
      std::optional<double> value;
      if (!cells[i].empty()) {
        double v = 0.0;
        const char* end = cells[i].data() + cells[i].size();
        const auto [ptr, ec] = std::from_chars(cells[i].data(), end, v);
        if (ec != std::errc() || ptr != end) {
          throw InputError(fmt::format("{}:{}: column '{}': expected a number, got '{}'", path.string(),
                                       line_number, header[i], cells[i]));
        }
        value = v;
      }
      table.columns_[header[i]].push_back(value);
    }
    ++table.rows_;
  }
  return table;
}

const std::vector<std::optional<double>>& CsvTable::Column(const std::string& column) const {
  const auto it = columns_.find(column);
  if (it == columns_.end()) {
    throw InputError(fmt::format("{}: expected a column '{}'", path_.string(), column));
  }
  return it->second;
}

std::vector<double> CsvTable::Values(const std::string& column, double scale) const {
  std::vector<double> out;
  for (const std::optional<double>& v : Column(column)) out.push_back(v ? *v * scale : std::nan(""));
  return out;
}

}  // namespace tumbletrace
