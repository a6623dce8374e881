// Must not build: the core layer (computation) cannot see the io layer's headers.
#include "orderband/npy_io.hpp"
