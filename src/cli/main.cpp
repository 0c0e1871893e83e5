#include <iostream>

#include "cli/app.hpp"

int main(int argc, char** argv) {
  return levelhead::cli::run(std::vector<std::string>(argv, argv + argc), std::cout, std::cerr);
}
