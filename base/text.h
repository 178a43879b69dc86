// User-supplied text at the edge: case files, --set values, file names and
// messages are bytes, and the JSON results must be valid UTF-8. These
// helpers find the first byte that is not UTF-8, make any byte string safe
// to print or to store, and compute the fingerprint that ties a result to
// its input.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace backcomb
{
  // Offset of the first byte of `text` that does not belong to a valid
  // UTF-8 sequence (overlong forms, surrogates and code points above
  // U+10FFFF count as invalid), or nothing when all of it is UTF-8.
  std::optional<std::size_t> first_invalid_utf8(std::string_view text);

  // `text` with every byte that is not UTF-8 written as the four
  // characters \xNN (so that a message names the byte); valid text is
  // returned unchanged.
  std::string escape_invalid_utf8(std::string_view text);

  // Throws InputError unless `text` is UTF-8. The message names `where`
  // (a file name or "--set Section/Name"), the line (1-based, when
  // `by_line`), the byte offset from the start of `text` and the byte's
  // value, and suggests the likely cause.
  void require_utf8(std::string_view text, const std::string &where, bool by_line);

  // `text` without a leading UTF-8 byte order mark (EF BB BF).
  std::string without_byte_order_mark(const std::string &text);

  // The fingerprint of a result: 16 hex digits of a 64-bit FNV-1a hash of
  // the program version, the case text and the overrides (each with its
  // length, so that no two different inputs run together alike). summary.json
  // carries it; `merge` and a resumed sweep compare it with the plan.
  std::string result_fingerprint(const std::string &case_text, const std::vector<std::string> &overrides);

  // The program version (CMake project version).
  const char *program_version();
} // namespace backcomb
