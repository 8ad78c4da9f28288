// Cells of the fixed-width tables for people: numbers shown with a few decimals (scientific when
// too small or too large to read), text cut to a column, columns padded to a width, and rules.
// Machine-readable numbers are not written here (cells.hpp writes them at 17 digits).
#pragma once

#include <cstddef>
#include <string>
#include <string_view>

namespace firmcall {

/// `s` safe to show on a terminal: the controls (C0 including tab and line breaks, DEL, C1), the
/// bidirectional embedding, override and isolate controls and each byte that is not well-formed
/// UTF-8 written as escapes ("\x1b", "\u202e", "\xff"), so that text from a file cannot move the
/// cursor, recolour the screen or reorder a line; other text unchanged.
std::string terminal_text(std::string_view s);

/// False when `s` is printable ASCII, which terminal_text leaves as it is.
bool needs_terminal_escape(std::string_view s) noexcept;

/// `s` (as terminal_text shows it) cut to `width` characters, the last one '~' when cut.
std::string fit_text(std::string_view s, std::size_t width);

/// Columns `s` takes on a terminal (characters, wide East Asian forms as 2), not bytes.
std::size_t display_width(std::string_view s) noexcept;

/// `decimals` fixed decimals while readable (10^(1-decimals) <= |v| < 1e7), else scientific with two
/// decimals; "0" for zero; with `sign` a leading '+' on positive values; "-" when not finite.
std::string table_number(double v, int decimals, bool sign = false);
/// `decimals` fixed decimals (with `sign` a leading '+' on positive values); "-" when not finite.
std::string fixed_number(double v, int decimals, bool sign = false);
/// The shortest of fixed and scientific with six significant digits, as printf's %g.
std::string general_number(double v);
/// A fraction in percent as general_number writes it, then '%' (0.05 -> "5%").
std::string percent_text(double fraction);

/// `s` (as terminal_text shows it) then spaces up to `width` columns; `s` and one space when it is as wide or
/// wider.
std::string left_cell(std::string_view s, std::size_t width);
/// Spaces then `s` (as terminal_text shows it), `width` columns in all; one space and `s` when it is as wide
/// or wider.
std::string right_cell(std::string_view s, std::size_t width);

/// Appends a rule of `width` dashes and a line break.
void append_rule(std::string& out, std::size_t width);

}  // namespace firmcall
