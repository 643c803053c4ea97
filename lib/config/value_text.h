// How config/ writes values for people, in problems and summaries.
#pragma once

#include <string>
#include <string_view>

namespace seston {

// The shortest digits that read back as the same double, in plain decimal when that
// stays short ("0", "0.995", "200000"), else in exponent form ("1e-300").
std::string NumberText(double value);

// `text` in double quotes with JSON escapes, so that quotes and control characters in
// a value stay visible: "six", "\t".
std::string QuotedText(std::string_view text);

}  // namespace seston
