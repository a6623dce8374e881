// Maps a scan with the installed orderband library and prints its ordered area fraction.
#include <cstdio>
#include <exception>

#include "orderband/map_scan.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/scan_inputs_io.hpp"

int main(int argc, char** argv) {
  if (argc != 2) {
    std::fprintf(stderr, "usage: area_fraction SCAN.toml\n");
    return 2;
  }
  try {
    const orderband::ScanInputs inputs = orderband::read_scan_inputs(orderband::read_scan_config(argv[1]));
    const orderband::MapResults r = orderband::map_scan(inputs, orderband::MapOptions{});
    std::printf("%.9f\n", r.ordered_area_fraction());
  } catch (const std::exception& e) {
    std::fprintf(stderr, "area_fraction: %s\n", e.what());
    return 1;
  }
}
