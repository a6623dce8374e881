// One scan's inputs: what follows from them without reading a file.
#include "orderband/scan_inputs.hpp"

namespace orderband {

DetectorGeometrySpec ScanInputs::geometry() const {
  return geometry_for(config, patterns->width(), patterns->height());
}

const Preprocessor& ScanInputs::preprocessor(const ProgressFn& progress) const {
  if (!shared_preprocessor)
    shared_preprocessor = std::make_shared<const Preprocessor>(preprocessor(config.preprocess, progress));
  return *shared_preprocessor;
}

Preprocessor ScanInputs::preprocessor(const PreprocessSpec& spec, const ProgressFn& progress) const {
  return make_preprocessor(spec, *patterns, preprocess_images, progress);
}

}  // namespace orderband
