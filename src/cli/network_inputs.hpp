#pragma once
// Options shared by the commands that read a points and a sections table.

#include <CLI/CLI.hpp>
#include <string>

#include "levelhead/core/units.hpp"
#include "levelhead/levelling/adjustment.hpp"
#include "levelhead/levelling/network.hpp"

namespace levelhead::cli {

struct NetworkInputs {
  std::string points, sections, out;
  std::string unit = "m";
  std::string sections_unit;  // empty: as unit (the chain says m for the sections of `reduce`)
  std::string points_columns, sections_columns, points_layer, sections_layer;
};

// --points, --sections, --out (all required), --unit, --sections-unit, column
// maps and layers.
void add_network_input_options(CLI::App& command, NetworkInputs& inputs);

// Known heights whose `datum` is a PROJ CRS in feet must come from a table
// in that unit; throws InputError naming the row otherwise. Names PROJ does
// not know (references of our own, in metres) are not checked.
void require_point_units(const PointTable& points, LengthUnit table_unit);

// Checks the units and column maps given, without reading (OptionError).
void check_network_input_options(const NetworkInputs& inputs);

// --levelling-class NAME: the levelling class (precision.hpp) that sets `what` of this
// command; excludes `explicit_value`, the option that gives it by number.
CLI::Option* add_levelling_class_option(CLI::App& command, std::string& name,
                                        CLI::Option* explicit_value, const std::string& what);

// The adjustment's sigma per sqrt(km) from the class named with --levelling-class
// (its standard error); a k given by number (`given` counted) leaves no class.
void apply_levelling_class(const std::string& name, const CLI::Option* given,
                           AdjustmentOptions& options);

// Reads both tables and checks the network. Throws the library's errors.
// group_column: see read_sections (network.hpp).
Network load_network(const NetworkInputs& inputs, const std::string& group_column = {});

}  // namespace levelhead::cli
