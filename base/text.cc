#include "base/text.h"

#include "base/errors.h"

#include <cstdint>
#include <cstdio>

namespace backcomb
{
  namespace
  {
    // Length of the valid UTF-8 sequence starting at `i`, or 0 (RFC 3629,
    // section 4: the well-formed byte sequences).
    std::size_t
    sequence_length(const std::string_view s, const std::size_t i)
    {
      const auto b = [&](std::size_t k) { return static_cast<unsigned char>(s[k]); };
      const unsigned char c = b(i);
      if (c < 0x80)
        return 1;
      std::size_t   n  = 0;
      unsigned char lo = 0x80, hi = 0xBF; // range of the second byte
      if (c >= 0xC2 && c <= 0xDF)
        n = 2;
      else if (c >= 0xE0 && c <= 0xEF)
        {
          n  = 3;
          lo = c == 0xE0 ? 0xA0 : 0x80;
          hi = c == 0xED ? 0x9F : 0xBF;
        }
      else if (c >= 0xF0 && c <= 0xF4)
        {
          n  = 4;
          lo = c == 0xF0 ? 0x90 : 0x80;
          hi = c == 0xF4 ? 0x8F : 0xBF;
        }
      else
        return 0;
      if (i + n > s.size() || b(i + 1) < lo || b(i + 1) > hi)
        return 0;
      for (std::size_t k = 2; k < n; ++k)
        if (b(i + k) < 0x80 || b(i + k) > 0xBF)
          return 0;
      return n;
    }

    std::string
    hex_byte(const unsigned char c)
    {
      char buffer[8];
      std::snprintf(buffer, sizeof buffer, "0x%02X", c);
      return buffer;
    }
  } // namespace

  std::optional<std::size_t>
  first_invalid_utf8(const std::string_view text)
  {
    for (std::size_t i = 0; i < text.size();)
      {
        const std::size_t n = sequence_length(text, i);
        if (n == 0)
          return i;
        i += n;
      }
    return std::nullopt;
  }

  std::string
  escape_invalid_utf8(const std::string_view text)
  {
    std::string out;
    out.reserve(text.size());
    for (std::size_t i = 0; i < text.size();)
      {
        const std::size_t n = sequence_length(text, i);
        if (n == 0)
          {
            out += "\\x" + hex_byte(static_cast<unsigned char>(text[i])).substr(2);
            ++i;
          }
        else
          {
            out.append(text.substr(i, n));
            i += n;
          }
      }
    return out;
  }

  void
  require_utf8(const std::string_view text, const std::string &where, const bool by_line)
  {
    const auto at = first_invalid_utf8(text);
    if (!at)
      return;
    std::size_t line = 1, line_start = 0;
    for (std::size_t i = 0; i < *at; ++i)
      if (text[i] == '\n')
        ++line, line_start = i + 1;
    const unsigned char byte = static_cast<unsigned char>(text[*at]);
    std::string         message = escape_invalid_utf8(where);
    if (by_line)
      message += ":" + std::to_string(line);
    message += ": byte " + hex_byte(byte) + " at offset " + std::to_string(*at) +
               (by_line ? " (column " + std::to_string(*at - line_start + 1) + ")" : std::string()) +
               " is not UTF-8 text";
    if (byte >= 0xA0)
      message += " (a Latin-1 or Windows-1252 character such as '\\xB5' for the micro sign?)";
    message += by_line ? "; save the file as UTF-8 (or use plain ASCII, e.g. 'um' for micrometres)"
                       : "; give the value in UTF-8 or plain ASCII";
    throw InputError(message);
  }

  std::string
  without_byte_order_mark(const std::string &text)
  {
    return text.compare(0, 3, "\xEF\xBB\xBF") == 0 ? text.substr(3) : text;
  }

  std::string
  result_fingerprint(const std::string &case_text, const std::vector<std::string> &overrides)
  {
    // 64-bit FNV-1a (G. Fowler, L. C. Noll, K.-P. Vo), as the checkpoint:
    // it tells inputs apart, it is no defence against deliberate forgery.
    std::uint64_t h   = 14695981039346656037ull;
    const auto    add = [&h](const std::string &s) {
      const std::string framed = std::to_string(s.size()) + ":" + s;
      for (const char c : framed)
        {
          h ^= static_cast<unsigned char>(c);
          h *= 1099511628211ull;
        }
    };
    add(program_version());
    add(case_text);
    for (const auto &o : overrides)
      add(o);
    char buffer[20];
    std::snprintf(buffer, sizeof buffer, "%016llx", static_cast<unsigned long long>(h));
    return buffer;
  }

  const char *
  program_version()
  {
    return BACKCOMB_VERSION;
  }
} // namespace backcomb
