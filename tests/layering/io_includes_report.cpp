// Must not build: the io layer cannot see the report layer's headers.
#include "orderband/svg_plot.hpp"
