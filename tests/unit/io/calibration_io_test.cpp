// Tests of the default-history reader and the calibration file (src/io/calibration_io.cpp).
#include "firmcall/io/calibration_io.hpp"

#include <doctest/doctest.h>

#include <string>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/sha256.hpp"
#include "test_util.hpp"

using namespace firmcall;
using firmcall::testing::TempDir;

namespace {

std::string error_of(const std::string& csv) {
  TempDir dir;
  const std::string path = dir.write("h.csv", csv);
  try {
    read_default_history(path);
  } catch (const InputError& e) {
    const std::string what = e.what();
    CHECK(what.rfind(path, 0) == 0);  // the message starts with the file
    return what.substr(path.size());
  }
  return "no error";
}

const char* kHeader = "id,as_of,distance_to_default,defaulted\n";

}  // namespace

TEST_CASE("default history: reads rows, dates, weights and the data digest") {
  TempDir dir;
  const std::string text =
      "id,as_of,distance_to_default,defaulted,weight,sector\n"
      "A,2021-12-31,1.5,1,2,x\nA,2022-12-31,2.5,0,1,x\nB,2020-12-31,3,0,0.5,y\n";
  const DefaultHistory h = read_default_history(dir.write("h.csv", text));
  REQUIRE(h.id.size() == 3);
  CHECK(h.distance_to_default[2] == 3.0);
  CHECK(h.defaulted[0] == 1.0);
  CHECK(h.weight[2] == 0.5);
  CHECK(h.as_of_first == "2020-12-31");
  CHECK(h.as_of_last == "2022-12-31");
  CHECK(h.line[1] == 3);
  CHECK(h.data_sha256 == sha256_hex(text));
  REQUIRE(h.notes.size() == 1);  // the sector column is not used
}

TEST_CASE("default history: bad rows name file, line and field") {
  // The messages say what is wrong where (common practice of every firmcall reader).
  CHECK(error_of(std::string(kHeader) + "A,2021-12-31,1.5,2\nB,2021-12-31,2,0\n") ==
        ":2: field 'defaulted': expected 0 or 1, got '2'");
  CHECK(error_of(std::string(kHeader) + "A,2021-12-31,1.5,1\nA,2021-12-31,2,0\n") ==
        ":3: field 'id': obligor 'A' as of 2021-12-31 repeats line 2");
  CHECK(error_of(std::string(kHeader) + "A,2021-12-31,1.5,0\nB,2021-12-31,2,0\n")
            .find("field 'defaulted': no defaults") != std::string::npos);
  CHECK(error_of(std::string(kHeader) + "A,2021-12-31,1.5,1\nB,2021-12-31,2,1\n").find("one class only") !=
        std::string::npos);
  CHECK(error_of(std::string(kHeader) + "A,2021-12-31,nan,1\n") ==
        ":2: field 'distance_to_default': expected a finite number, got 'nan'");
  CHECK(error_of(std::string(kHeader) + "A,2021-12-31,1,1\nB,2021-12-31,,0\n") ==
        ":3: field 'distance_to_default': missing");
  CHECK(error_of(std::string(kHeader) + "A,2021-02-30,1,1\n") ==
        ":2: field 'as_of': expected a date YYYY-MM-DD, got '2021-02-30'");
  CHECK(error_of("id,as_of,defaulted\nA,2021-12-31,1\n") ==
        ":1: header: required column 'distance_to_default' is missing (or give the book columns of a "
        "score book to compute it from)");
}

TEST_CASE("calibration file: written and read back, the same PD at every DD") {
  CalibrationRecord rec;
  PdCalibration& c = rec.calibration;
  c.method = CalibrationMethod::logistic;
  c.status = CalibrationStatus::ok;
  c.observations = 1000;
  c.defaults = 20;
  c.dd_min = -0.25;
  c.dd_max = 8.5;
  c.logistic = {.intercept = -1.6123456789012345,
                .slope = -0.7512345678901234,
                .intercept_se = 0.21,
                .slope_se = 0.061,
                .covariance = -0.011,
                .log_likelihood = -90.5};
  c.prepare_intervals();
  rec.as_of_first = "2019-12-31";
  rec.as_of_last = "2023-12-31";
  rec.data_sha256 = std::string(64, 'a');
  const CalibrationRecord back = parse_calibration(calibration_yaml(rec), "cal.yaml");
  CHECK(back.calibration.logistic.intercept == c.logistic.intercept);  // shortest round-trip numbers
  CHECK(back.calibration.logistic.slope == c.logistic.slope);
  CHECK(back.data_sha256 == rec.data_sha256);
  for (double dd : {-1.0, 0.0, 2.5, 9.0}) {
    CHECK(back.calibration.evaluate(dd).pd == c.evaluate(dd).pd);
    CHECK(back.calibration.evaluate(dd).upper == c.evaluate(dd).upper);
    CHECK(back.calibration.evaluate(dd).extrapolated == c.evaluate(dd).extrapolated);
  }
}

TEST_CASE("calibration file: bad fields name file, line and key") {
  const std::string good =
      "firmcall_calibration: 1\nmethod: isotonic\npd_horizon_years: 1\nconfidence_level: 0.95\n"
      "sample: {observations: 10, defaults: 2, as_of_first: 2020-12-31, as_of_last: 2021-12-31, dd_min: 1, "
      "dd_max: 4, data_sha256: x}\n"
      "blocks:\n  - {dd_lower: 1, dd_upper: 2, observations: 5, defaults: 2, pd_raw: 0.4, pd: 0.4}\n"
      "  - {dd_lower: 3, dd_upper: 4, observations: 5, defaults: 0, pd_raw: 0, pd: 0.08333}\n";
  CHECK(parse_calibration(good, "c.yaml").calibration.blocks.size() == 2);
  const auto error = [](const std::string& text) {
    try {
      parse_calibration(text, "c.yaml");
    } catch (const InputError& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  std::string up = good;
  up.replace(up.find("pd: 0.08333"), 11, "pd: 0.5");
  CHECK(error(up) == "c.yaml:8: block: field 'pd': PD must not increase with DD");
  std::string version = good;
  version.replace(0, 23, "firmcall_calibration: 2");
  CHECK(error(version).find("c.yaml:1: key 'firmcall_calibration': format version 1 expected") == 0);
  std::string method = good;
  method.replace(method.find("isotonic"), 8, "magic");
  CHECK(error(method).find("c.yaml:2: key 'method'") == 0);
}

TEST_CASE("default history: book columns instead of a DD column") {
  TempDir dir;
  const std::string text =
      "id,as_of,market_cap,equity_vol,default_point,sector,defaulted\n"
      "A,2021-12-31,1250,0.32,850,x,1\nB,2021-12-31,310,0.55,400,y,0";
  const std::string path = dir.write("h.csv", text);
  const DefaultHistory h = read_default_history(path);
  CHECK(h.dd_from_book_fields());
  CHECK(h.distance_to_default.empty());
  REQUIRE(h.book_rows.size() == 2);
  ObligorRecord rec;
  h.book_record(1, rec);
  CHECK(rec.line == 3);
  CHECK(rec.get(NumField::default_point) == 400.0);
  CHECK(rec.get(NumField::market_cap) == 310.0);
  CHECK(rec.get(TextField::id) == "B");
  CHECK_FALSE(rec.has(NumField::rate));
  REQUIRE(h.notes.size() == 3);
  CHECK(h.notes[0] == path + ":1: note: column 'sector' is not used");
  CHECK(h.notes[1].find(":1: note: no column 'distance_to_default': each row's DD is computed from its book "
                        "columns") != std::string::npos);
  CHECK(h.notes[2] == path +
                          ":3: note: the file does not end with a line break; its last row was read as it "
                          "stands (check that the file was not cut short)");

  // Messages name file, line and field (common practice of every firmcall reader).
  CHECK(error_of("id,as_of,market_cap,equity_vol,default_point,defaulted\nA,2021-12-31,1250,32%,850,1\n") ==
        ":2: field 'equity_vol': expected a finite decimal number such as 0.35, got '32%'");
  CHECK(error_of("id,as_of,market_cap,default_point,defaulted\nA,2021-12-31,1250,850,1\n") ==
        ":1: header: required column 'equity_vol' is missing");
  CHECK(error_of("id,as_of,market_cap,equity_vol,default_point,defaulted\nA,2021-12-31,1250,0.3,1\n") ==
        ":2: row has 5 fields, the header has 6");
}

TEST_CASE("default history: a DD column wins over book columns, with a note") {
  TempDir dir;
  const std::string path =
      dir.write("h.csv",
                "id,as_of,distance_to_default,market_cap,equity_vol,defaulted\nA,2021-12-31,1.5,1250,0.3,1\n"
                "B,2021-12-31,2.5,,,0\n");
  const DefaultHistory h = read_default_history(path);
  CHECK_FALSE(h.dd_from_book_fields());
  CHECK(h.book_rows.empty());
  CHECK(h.distance_to_default == std::vector<double>{1.5, 2.5});
  REQUIRE(h.notes.size() == 1);
  CHECK(h.notes[0] ==
        path +
            ":1: note: book columns 'market_cap', 'equity_vol' are not used: the DD is read from "
            "column 'distance_to_default'");
}

TEST_CASE("default history: a repeat is found among many short rows") {
  // Rows shorter than the reader's size estimate make its index of (id, as_of) grow.
  std::string text = kHeader;
  for (int i = 0; i < 5000; ++i) {  // about 94 KB: the index starts at 8192 slots, half full at 4096
    text += 'O';
    text += std::to_string(i);
    text += i % 2 ? ",2021-12-31,1,1\n" : ",2021-12-31,1,0\n";
  }
  text += "O7,2022-12-31,1,0\n";                      // another year: no repeat
  CHECK(error_of(text + "O1234,2021-12-31,2,0\n") ==  // line 2 + 1234, counted by hand
        ":5003: field 'id': obligor 'O1234' as of 2021-12-31 repeats line 1236");
  CHECK(error_of(text + "O4900,2021-12-31,2,0\n") ==  // a row added after the index grew
        ":5003: field 'id': obligor 'O4900' as of 2021-12-31 repeats line 4902");
}
