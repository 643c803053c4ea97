// Number formatting for the plain-words text of readings and alerts. Internal to the
// drift and alerts modules. printf-style because GCC 12 has no <format>.
#pragma once

#include <string>

namespace seston {

// `value` with exactly `decimals` digits after the point: FormatFixed(0.0521, 3) = "0.052".
std::string FormatFixed(double value, int decimals);

// `value` with `significant` significant digits, exponent when needed:
// FormatSignificant(1.49e-6, 3) = "1.49e-06".
std::string FormatSignificant(double value, int significant);

// Same as FormatFixed, with a "+" before values that are not negative.
std::string FormatSigned(double value, int decimals);

}  // namespace seston
