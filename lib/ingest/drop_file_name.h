// Rules for the names of files in the drop directory.
//
// A name given to the watcher or the file mover is only ever used as one path component
// directly inside a configured directory. Spaces, newlines and bytes that are not UTF-8
// are allowed (the operating system allows them, and the name is never parsed as text),
// but a name that could leave the directory is refused: empty, ".", "..", or containing
// '/' or a NUL byte.
//
// Which names are taken (IsDropFileName): a safe name that ends with the configured
// suffix (case-sensitive, e.g. ".csv") and is not a temporary name as writers commonly
// make them (common practice): a dot-file ("." first, which also hides editor and rsync
// temporaries), or a name ending in ".part", ".tmp" or "~". A name equal to the suffix
// alone is not taken.
//
// Pure functions; any thread.
#pragma once

#include <string>
#include <string_view>

namespace seston {

// True when `name` is a single path component that stays inside its directory.
bool IsSafeEntryName(std::string_view name);

// True when a regular file called `name` in the drop directory is to be read.
bool IsDropFileName(std::string_view name, std::string_view file_suffix);

// `name` with every byte outside printable ASCII, and the backslash, written as \n, \t
// or \xNN, for log lines and notes: a hostile name cannot forge a line of its own.
std::string EscapeNameForText(std::string_view name);

}  // namespace seston
