// Row results as bytes.
#include "orderband/row_store.hpp"

#include "orderband/error.hpp"

namespace orderband {

void ByteReader::throw_short() const { fail("resume data is truncated; delete the .resume folder and run again"); }

}  // namespace orderband
