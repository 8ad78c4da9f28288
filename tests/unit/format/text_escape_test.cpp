// Text from a file shown on a terminal, written into JSON, or put on the HTML page: controls,
// bidirectional controls and bytes that are not UTF-8 never reach the screen or the page as they are.
#include <doctest/doctest.h>

#include <string>

#include "firmcall/format/cells.hpp"
#include "firmcall/format/table_text.hpp"
#include "firmcall/report/svg.hpp"
#include "firmcall/util/utf8.hpp"

using namespace firmcall;

TEST_CASE("terminal_text escapes C0, DEL, C1, bidirectional controls and bytes that are not UTF-8") {
  CHECK(terminal_text("ALD-01 Alder Freight") == "ALD-01 Alder Freight");
  CHECK(terminal_text("M\xC3\xBCller AG") == "M\xC3\xBCller AG");  // U+00FC stays as it is
  // ESC [ 2 J clears the screen (ECMA-48, from memory).
  CHECK(terminal_text("X\x1b[2J") == "X\\x1b[2J");
  CHECK(terminal_text("a\tb\nc\rd\x7f") == "a\\x09b\\x0ac\\x0dd\\x7f");
  // U+009B (CSI) as UTF-8 is C2 9B (RFC 3629); a lone 9B byte is not UTF-8.
  CHECK(terminal_text("\xC2\x9B"
                      "1m") == "\\u009b1m");
  CHECK(terminal_text("\x9B"
                      "1m") == "\\x9b1m");
  // U+202E RIGHT-TO-LEFT OVERRIDE is E2 80 AE, U+2066 LEFT-TO-RIGHT ISOLATE is E2 81 A6 (Unicode UAX #9).
  CHECK(terminal_text("evil\xE2\x80\xAEtxt.exe") == "evil\\u202etxt.exe");
  CHECK(terminal_text("\xE2\x81\xA6x") == "\\u2066x");
  // An overlong encoding of '/' (C0 AF) is not UTF-8 (RFC 3629 section 10).
  CHECK(terminal_text("\xC0\xAF") == "\\xc0\\xaf");
  // Table cells show the escapes, cut and padded as any other text.
  CHECK(left_cell("A\x1b", 6) == "A\\x1b ");
  CHECK(fit_text("ABC\x1b[31m", 6) == "ABC\\x~");
}

TEST_CASE("the problem list under a table escapes the ids it quotes") {
  std::string out;
  append_table_problems(out, {"obligor 'X\x1b[2J': field 'pd': missing"}, 0);
  CHECK(out == "  obligor 'X\\x1b[2J': field 'pd': missing\n");
}

TEST_CASE("valid_utf8_text replaces each stray byte with U+FFFD and keeps the rest") {
  CHECK(valid_utf8_text("plain") == "plain");
  CHECK(valid_utf8_text("a\xFF"
                        "b\xC3\xA9") ==
        "a\xEF\xBF\xBD"
        "b\xC3\xA9");
  // A truncated three-byte sequence: each of its bytes is replaced (one U+FFFD per byte).
  CHECK(valid_utf8_text("\xE2\x82") == "\xEF\xBF\xBD\xEF\xBF\xBD");
  CHECK(valid_utf8(valid_utf8_text("\xED\xA0\x80")));  // a UTF-16 surrogate (RFC 3629)
}

TEST_CASE("JSON keeps valid text exact and replaces only the bytes that are not UTF-8") {
  std::string out;
  append_json_string(out, "M\xC3\xBCller\xFF\x1b");
  // RFC 8259 section 7: controls below U+0020 are escaped as \u00XX.
  CHECK(out == "\"M\xC3\xBCller\xEF\xBF\xBD\\u001b\"");
}

TEST_CASE("xml_escape keeps the page UTF-8 and neutralises controls and bidirectional overrides") {
  CHECK(xml_escape("a<b>&\"'") == "a&lt;b&gt;&amp;&quot;&#39;");
  CHECK(xml_escape("M\xC3\xBCller") == "M\xC3\xBCller");
  const std::string bad = xml_escape("X\xFF\xFE\x1b\x7f\xC2\x85\xE2\x80\xAE\xE2\x81\xA9Y");
  CHECK(valid_utf8(bad));
  CHECK(bad == "X\xEF\xBF\xBD\xEF\xBF\xBD\xEF\xBF\xBD\xEF\xBF\xBD\xEF\xBF\xBD\xEF\xBF\xBD\xEF\xBF\xBDY");
  CHECK(xml_escape("tab\there") == "tab\there");
}

TEST_CASE("table cells count characters, not bytes: accents, wide forms and combining marks") {
  using firmcall::display_width;
  using firmcall::left_cell;
  using firmcall::right_cell;
  // Widths by Unicode's East_Asian_Width property (UAX #11, from memory): Latin letters with
  // accents are narrow (1), CJK ideographs wide (2), a combining acute accent takes no column.
  CHECK(display_width("Zurich") == 6);
  CHECK(display_width("Z\xC3\xBCrich") == 6);             // Zürich, ü as one precomposed character
  CHECK(display_width("Zu\xCC\x88rich") == 6);            // u + combining diaeresis
  CHECK(display_width("\xE6\x97\xA5\xE6\x9C\xAC") == 4);  // two CJK ideographs
  // Padding brings every cell to the same width on screen, whatever its bytes.
  CHECK(display_width(left_cell("\xC3\x89mile Fr\xC3\xA8res", 16)) == 16);
  CHECK(display_width(right_cell("\xC3\x89mile", 9)) == 9);
  CHECK(left_cell("\xC3\x89mile", 8) == "\xC3\x89mile   ");
  // Cutting keeps whole characters: the cut text is valid UTF-8 and exactly `width` columns.
  const std::string cut = fit_text("\xC3\x89tablissements Lef\xC3\xA8vre", 14);
  CHECK(cut == "\xC3\x89tablissement~");
  CHECK(firmcall::valid_utf8(cut));
  CHECK(display_width(cut) == 14);
  const std::string wide = fit_text("\xE6\x97\xA5\xE6\x9C\xAC\xE6\x97\xA5\xE6\x9C\xAC", 6);
  CHECK(firmcall::valid_utf8(wide));
  CHECK(display_width(wide) <= 6);
  CHECK(wide == "\xE6\x97\xA5\xE6\x9C\xAC~");  // 2 + 2 columns, then '~' (a third would not fit)
}
