// The bearer token for API writes, as kept in the file named by api.token_file.
//
// One token per file; surrounding whitespace (a trailing newline) is ignored. The token
// must be 16 to 4096 printable ASCII characters without spaces, so that it travels in
// an Authorization header unchanged. Read by the daemon (to check requests) and by
// sestonctl (to send them), both through this function.
#pragma once

#include <string>

#include "base/file_system.h"
#include "base/status.h"

namespace seston {

// The token in `path`. IoError/NotFound when it cannot be read, InvalidArgument naming
// the file when its content is not an acceptable token.
Result<std::string> LoadApiToken(FileSystem& file_system, const std::string& path);

}  // namespace seston
