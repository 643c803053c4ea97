#include "drift/reading_text.h"

#include <cstdio>

namespace seston {

std::string FormatFixed(double value, int decimals) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.*f", decimals, value);
  return buffer;
}

std::string FormatSignificant(double value, int significant) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.*g", significant, value);
  return buffer;
}

std::string FormatSigned(double value, int decimals) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%+.*f", decimals, value);
  return buffer;
}

}  // namespace seston
