// Powers of ten that a double holds exactly, for readers that turn a run of decimal
// digits into an integer and divide once: an integer below 2^53 divided by one of these
// is the correctly rounded value of the decimal (Clinger 1990).
#pragma once

namespace seston {

// 10^0 .. 10^22: 10^22 is the largest power of ten a double represents exactly.
inline constexpr double kExactPowersOfTen[] = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                               1e8,  1e9,  1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
                                               1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};

}  // namespace seston
