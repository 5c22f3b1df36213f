// Reads the check values in data/reference/ (format: data/reference/README.md).
// A file is comment lines starting with '#', one line naming the columns, then
// rows of comma-separated cells (never quoted); an empty cell has no value.
// Lookups that find nothing throw, naming the file, so a test that reads a
// value fails with the reason instead of comparing against a default.
#pragma once

#include <cstddef>
#include <cstdlib>
#include <fstream>
#include <initializer_list>
#include <memory>
#include <stdexcept>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#ifndef LOOPAUDIT_REFERENCE_DATA
#error "LOOPAUDIT_REFERENCE_DATA must name the data/reference folder"
#endif

namespace reference {

class Row {
 public:
  Row(std::string file, std::shared_ptr<const std::vector<std::string>> columns, std::vector<std::string> cells)
      : file_(std::move(file)), columns_(columns), cells_(std::move(cells)) {}

  const std::string& text(std::string_view column) const { return cells_[index(column)]; }
  bool has(std::string_view column) const { return !text(column).empty(); }

  double number(std::string_view column) const {
    const std::string& cell = text(column);
    char* end = nullptr;
    const double value = std::strtod(cell.c_str(), &end);
    if (cell.empty() || end != cell.c_str() + cell.size()) {
      throw std::runtime_error(file_ + ": column " + std::string(column) + " of row " + cells_[0] +
                               " is not a number: '" + cell + "'");
    }
    return value;
  }

 private:
  std::size_t index(std::string_view column) const {
    for (std::size_t i = 0; i < columns_->size(); ++i) {
      if ((*columns_)[i] == column) return i;
    }
    throw std::runtime_error(file_ + " has no column " + std::string(column));
  }

  std::string file_;
  std::shared_ptr<const std::vector<std::string>> columns_;
  std::vector<std::string> cells_;
};

class Table {
 public:
  // `name` is a file in data/reference/, e.g. "known_loops.csv".
  explicit Table(const std::string& name) : file_("data/reference/" + name) {
    const std::string path = std::string(LOOPAUDIT_REFERENCE_DATA) + "/" + name;
    std::ifstream in(path);
    if (!in) throw std::runtime_error("cannot open " + path);
    std::string line;
    while (std::getline(in, line)) {
      if (!line.empty() && line.back() == '\r') line.pop_back();
      if (line.empty() || line[0] == '#') continue;
      if (!columns_) {
        columns_ = std::make_shared<const std::vector<std::string>>(split(line));
        continue;
      }
      std::vector<std::string> cells = split(line);
      if (cells.size() != columns_->size()) {
        throw std::runtime_error(file_ + ": a row has " + std::to_string(cells.size()) + " cells for " +
                                 std::to_string(columns_->size()) + " columns: " + line);
      }
      rows_.emplace_back(file_, columns_, std::move(cells));
    }
    if (rows_.empty()) throw std::runtime_error(file_ + " has no rows");
  }

  const std::vector<Row>& rows() const { return rows_; }

  // The rows whose cells hold exactly these texts, in file order.
  std::vector<Row> rows_where(std::initializer_list<std::pair<std::string_view, std::string_view>> match) const {
    std::vector<Row> found;
    for (const Row& r : rows_) {
      bool all = true;
      for (const auto& [column, value] : match) all = all && r.text(column) == value;
      if (all) found.push_back(r);
    }
    if (found.empty()) throw std::runtime_error(file_ + " has no row with " + describe(match));
    return found;
  }

  // The one row with these cells.
  Row row_where(std::initializer_list<std::pair<std::string_view, std::string_view>> match) const {
    std::vector<Row> found = rows_where(match);
    if (found.size() != 1) throw std::runtime_error(file_ + " has several rows with " + describe(match));
    return found[0];
  }
  // The one row whose first column holds `key`.
  Row row(std::string_view key) const { return row_where({{columns_->at(0), key}}); }

 private:
  static std::vector<std::string> split(const std::string& line) {
    std::vector<std::string> cells;
    std::size_t start = 0;
    for (;;) {
      const std::size_t comma = line.find(',', start);
      cells.push_back(line.substr(start, comma == std::string::npos ? std::string::npos : comma - start));
      if (comma == std::string::npos) return cells;
      start = comma + 1;
    }
  }

  static std::string describe(std::initializer_list<std::pair<std::string_view, std::string_view>> match) {
    std::string text;
    for (const auto& [column, value] : match) {
      text += (text.empty() ? "" : ", ") + std::string(column) + " = " + std::string(value);
    }
    return text;
  }

  std::string file_;
  std::shared_ptr<const std::vector<std::string>> columns_;
  std::vector<Row> rows_;
};

}  // namespace reference
