// Must not build: the crystal layer cannot see the core layer's headers.
#include "orderband/rotation.hpp"
