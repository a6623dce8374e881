// Builds: the report layer sees every layer below it (the control of the probes that must fail).
#include "orderband/npy_io.hpp"
#include "orderband/phase.hpp"
#include "orderband/rotation.hpp"
#include "orderband/svg_plot.hpp"
