// The CSV reader every table shares (phantoms/csv_table.h), and its cell accessors on every cell.
#include <sstream>

#include "fuzz/fuzz_input.h"
#include "phantoms/csv_table.h"
#include "phantoms/user_error.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  std::istringstream input(frugal::fuzz::as_text(data, size));
  frugal::CsvTable table;
  try {
    table = frugal::parse_csv_table(input, "fuzz.csv");
  } catch (const frugal::UserError&) {
    return 0;
  }
  for (std::size_t row = 0; row < table.rows.size(); ++row) {
    for (int column = 0; column < static_cast<int>(table.columns.size()); ++column) {
      table.missing(row, column);
      try {
        table.number(row, column);
      } catch (const frugal::UserError&) {
      }
      try {
        table.integer(row, column, -1000, 1000);
      } catch (const frugal::UserError&) {
      }
    }
  }
  return 0;
}
