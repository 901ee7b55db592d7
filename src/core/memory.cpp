#include "covey/core/memory.hpp"

#include <unistd.h>

#include <cctype>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <vector>

#include "covey/core/error.hpp"

namespace covey {

std::uint64_t physical_memory_bytes() {
  const long pages = ::sysconf(_SC_PHYS_PAGES);
  const long page_size = ::sysconf(_SC_PAGE_SIZE);
  if (pages <= 0 || page_size <= 0) return std::uint64_t{4} << 30;  // unknown: assume 4 GiB
  return static_cast<std::uint64_t>(pages) * static_cast<std::uint64_t>(page_size);
}

std::uint64_t default_memory_limit() {
  if (const char* given = std::getenv("COVEY_MEMORY_LIMIT"); given && *given)
    return parse_memory_size(given, "COVEY_MEMORY_LIMIT");
  return static_cast<std::uint64_t>(0.8 * static_cast<double>(physical_memory_bytes()));
}

std::uint64_t parse_memory_size(const std::string& text, const std::string& option) {
  const auto bad = [&] {
    return InputError(option + ": '" + text +
                      "' is not a memory size (expected e.g. 512M, 4G, 1.5GiB or a byte count)");
  };
  double number = 0;
  const char* first = text.data();
  const char* last = first + text.size();
  auto [ptr, ec] = std::from_chars(first, last, number);
  if (ec != std::errc() || ptr == first || !std::isfinite(number) || number <= 0) throw bad();
  std::string suffix;
  for (const char* p = ptr; p < last; ++p) suffix += static_cast<char>(std::toupper(*p));
  double scale = 1;
  std::size_t pos = 0;
  if (!suffix.empty()) {
    const std::string units = "KMGT";
    const std::size_t u = units.find(suffix[0]);
    if (u != std::string::npos) {
      scale = std::ldexp(1.0, 10 * static_cast<int>(u + 1));
      pos = 1;
    }
  }
  const std::string rest = suffix.substr(pos);
  if (!(rest.empty() || rest == "B" || (pos == 1 && rest == "IB"))) throw bad();
  const double bytes = number * scale;
  if (bytes < 1 || bytes > 1.8e19) throw bad();
  return static_cast<std::uint64_t>(bytes);
}

std::string format_bytes(double bytes) {
  const char* units[] = {"B", "KiB", "MiB", "GiB", "TiB", "PiB"};
  int u = 0;
  while (bytes >= 1024 && u < 5) bytes /= 1024, ++u;
  char buf[64];
  if (u == 0)
    std::snprintf(buf, sizeof buf, "%.0f B", bytes);
  else
    std::snprintf(buf, sizeof buf, "%.2f %s", bytes, units[u]);
  return buf;
}

void require_memory(double bytes, std::uint64_t limit, const std::string& what,
                    const std::string& shrink) {
  const std::uint64_t allowed = limit ? limit : default_memory_limit();
  if (!(bytes <= static_cast<double>(allowed)))
    throw ResourceError(what + " needs about " + format_bytes(bytes) +
                        ", more than the memory limit of " +
                        format_bytes(static_cast<double>(allowed)) + "; " + shrink);
}

double dag_list_bytes(double count, int num_variables) {
  // A Dag holds its parent words in a vector: the vector itself plus one word per node.
  return count * (static_cast<double>(sizeof(std::vector<std::uint64_t>)) + 16.0 +
                  8.0 * static_cast<double>(num_variables));
}

void require_draws_memory(double count, int num_variables, const std::string& option,
                          std::uint64_t limit) {
  // The draws, plus one row of parent words per draw when they are written out.
  const double bytes =
      dag_list_bytes(count, num_variables) + count * 8.0 * static_cast<double>(num_variables);
  char what[64];
  std::snprintf(what, sizeof what, "%.4g draws of %d variables", count, num_variables);
  require_memory(bytes, limit, what, "a smaller " + option + " shrinks it");
}

}  // namespace covey
