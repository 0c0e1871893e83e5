#include <iostream>

#include "cli/app.hpp"
#include "cli/large_pages.hpp"

int main(int argc, char** argv) {
  levelhead::cli::restart_with_large_pages_for_large_inputs(argc, argv);
  return levelhead::cli::run(std::vector<std::string>(argv, argv + argc), std::cout, std::cerr);
}
