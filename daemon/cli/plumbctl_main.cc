// File: daemon/cli/plumbctl_main.cc
//
// plumbctl: the operator's command line for plumbd. The commands and their
// flags are in command_table.cc; parsing, help and exit statuses in
// command_line.h (0 done, 1 a failed operation, 2 a usage error).
#include <iostream>
#include <string>
#include <vector>

#include "daemon/cli/command_line.h"

int main(int argc, char** argv) {
  return plumbline::daemon::RunPlumbctl(
      std::vector<std::string>(argv + 1, argv + argc), std::cout, std::cerr);
}
