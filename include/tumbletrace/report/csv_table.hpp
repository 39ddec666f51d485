// A results CSV file (frames.csv, residuals.csv, tracks.csv) read back by column name, for
// the report: every cell a number, an empty cell "no value".
#pragma once

#include <filesystem>
#include <map>
#include <optional>
#include <string>
#include <vector>

namespace tumbletrace {

class CsvTable {
 public:
  // Reads a comma-separated file with a header row. Throws InputError naming the file and
  // the line (and column) of a row of the wrong length or a cell that is not a number.
  static CsvTable Read(const std::filesystem::path& path);

  size_t Rows() const { return rows_; }
  bool Has(const std::string& column) const { return columns_.count(column) > 0; }
  // The column's cells; throws InputError naming the file and the column when it is missing.
  const std::vector<std::optional<double>>& Column(const std::string& column) const;
  // The same, with NaN for an empty cell (for plotting).
  std::vector<double> Values(const std::string& column, double scale = 1.0) const;

 private:
  std::filesystem::path path_;
  size_t rows_ = 0;
  std::map<std::string, std::vector<std::optional<double>>> columns_;
};

}  // namespace tumbletrace
