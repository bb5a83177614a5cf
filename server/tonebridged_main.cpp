// tonebridged: the measuring service (see server/service.hpp).
#include <iostream>
#include <string>
#include <vector>

#include "server/service.hpp"

int main(int argc, char** argv) {
  return tb::run_service(std::vector<std::string>(argv + 1, argv + argc), std::cout, std::cerr);
}
