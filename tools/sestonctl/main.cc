// sestonctl's entry point; everything else is in sestonctl.cc (see sestonctl.h).
#include <cstdlib>
#include <iostream>

#include "sestonctl/sestonctl.h"

int main(int argc, char** argv) {
  std::vector<std::string> args(argv + 1, argv + argc);
  std::optional<std::string> api;
  if (const char* value = std::getenv("SESTON_API"); value != nullptr && *value != '\0') {
    api = value;
  }
  return seston::ctl::RunSestonctl(args, api, std::cout, std::cerr);
}
