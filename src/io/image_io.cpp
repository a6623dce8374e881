// PNG and TIFF reading and writing.
#include "orderband/image_io.hpp"

#include <png.h>
#include <tiffio.h>

#include <algorithm>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <memory>

#include "orderband/atomic_file.hpp"
#include "orderband/error.hpp"
#include "orderband/input_file.hpp"

namespace orderband {
namespace {

std::string lower_extension(const std::string& path) {
  std::string ext = std::filesystem::path(path).extension().string();
  for (char& c : ext) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return ext;
}

struct FileCloser {
  void operator()(FILE* f) const {
    if (f) std::fclose(f);
  }
};

// libpng reports through these instead of printing its own lines: the message becomes part of ours.
thread_local std::string png_message;
void png_quiet_error(png_structp png, png_const_charp message) {
  png_message = message ? message : "";
  png_longjmp(png, 1);
}
void png_quiet_warning(png_structp, png_const_charp) {}

// Pattern images are a few hundred pixels across; larger sides are damage, not data.
constexpr uint32_t kMaxImageSide = 16384;

/// A PNG as libpng decodes it. Every C++ object lives here, in the caller's frame: libpng's error
/// handler jumps back into decode_png, and a jump must not skip a destructor.
struct PngDecoded {
  int width = 0, height = 0, bits = 0, color = 0;
  bool grey = false;  ///< 8- or 16-bit greyscale (else nothing beyond the header was read)
  std::vector<uint8_t> buffer;
  std::vector<png_bytep> rows;
};

/// Returns false (png_message says why) when libpng fails.
bool decode_png(FILE* f, PngDecoded& out) {
  png_structp png = png_create_read_struct(PNG_LIBPNG_VER_STRING, nullptr, png_quiet_error, png_quiet_warning);
  if (!png) {
    png_message = "out of memory";
    return false;
  }
  png_infop info = png_create_info_struct(png);
  if (setjmp(png_jmpbuf(png))) {
    png_destroy_read_struct(&png, &info, nullptr);
    return false;
  }
  png_set_user_limits(png, kMaxImageSide, kMaxImageSide);
  png_init_io(png, f);
  png_read_info(png, info);
  out.color = png_get_color_type(png, info);
  out.bits = png_get_bit_depth(png, info);
  out.width = static_cast<int>(png_get_image_width(png, info));
  out.height = static_cast<int>(png_get_image_height(png, info));
  out.grey = out.color == PNG_COLOR_TYPE_GRAY && (out.bits == 8 || out.bits == 16);
  if (out.grey) {
    if (out.bits == 16) png_set_swap(png);  // PNG stores big-endian; read as host order (little-endian)
    png_read_update_info(png, info);
    const size_t stride = png_get_rowbytes(png, info);
    out.buffer.resize(stride * out.height);
    out.rows.resize(out.height);
    for (int i = 0; i < out.height; ++i) out.rows[i] = out.buffer.data() + i * stride;
    png_read_image(png, out.rows.data());
  }
  png_destroy_read_struct(&png, &info, nullptr);
  return true;
}

GrayImage read_png(const std::string& path) {
  std::unique_ptr<FILE, FileCloser> f(std::fopen(path.c_str(), "rb"));
  if (!f) fail("cannot read image '", path, "' (missing or unreadable)");
  PngDecoded d;
  if (!decode_png(f.get(), d)) fail("'", path, "' is not a readable PNG file (", png_message, ")");
  if (!d.grey) fail("'", path, "' must be an 8- or 16-bit greyscale PNG (colour type ", d.color, ", ", d.bits, " bit)");
  GrayImage img;
  img.width = d.width, img.height = d.height, img.bits = d.bits;
  img.pixels.resize(static_cast<size_t>(img.width) * img.height);
  for (int i = 0; i < img.height; ++i)
    for (int j = 0; j < img.width; ++j) {
      const uint8_t* row = d.rows[i];
      img.pixels[static_cast<size_t>(i) * img.width + j] =
          d.bits == 16 ? static_cast<uint16_t>(row[2 * j] | (row[2 * j + 1] << 8)) : row[j];
    }
  return img;
}

GrayImage read_tiff(const std::string& path) {
  TIFFSetWarningHandler(nullptr);
  TIFFSetErrorHandler(nullptr);
  std::unique_ptr<TIFF, decltype(&TIFFClose)> tif(TIFFOpen(path.c_str(), "r"), &TIFFClose);
  if (!tif) fail("cannot read TIFF image '", path, "' (missing, unreadable or not a TIFF file)");
  uint32_t w = 0, h = 0;
  uint16_t bits = 0, samples = 1, format = SAMPLEFORMAT_UINT;
  TIFFGetField(tif.get(), TIFFTAG_IMAGEWIDTH, &w);
  TIFFGetField(tif.get(), TIFFTAG_IMAGELENGTH, &h);
  TIFFGetFieldDefaulted(tif.get(), TIFFTAG_BITSPERSAMPLE, &bits);
  TIFFGetFieldDefaulted(tif.get(), TIFFTAG_SAMPLESPERPIXEL, &samples);
  TIFFGetFieldDefaulted(tif.get(), TIFFTAG_SAMPLEFORMAT, &format);
  if (samples != 1 || (bits != 8 && bits != 16) || format != SAMPLEFORMAT_UINT)
    fail("'", path, "' must be an 8- or 16-bit unsigned greyscale TIFF (", samples, " samples, ", bits, " bit)");
  if (w == 0 || h == 0 || w > kMaxImageSide || h > kMaxImageSide)
    fail("'", path, "': a TIFF of ", w, " x ", h, " px is not a pattern image (sides 1 to ", kMaxImageSide, " px)");
  const tmsize_t line_bytes = TIFFScanlineSize(tif.get());
  if (line_bytes < static_cast<tmsize_t>(w) * (bits / 8))
    fail("'", path, "': its TIFF rows hold fewer bytes than ", w, " pixels of ", bits, " bit");
  GrayImage img;
  img.width = static_cast<int>(w);
  img.height = static_cast<int>(h);
  img.bits = bits;
  img.pixels.resize(static_cast<size_t>(w) * h);
  std::vector<uint8_t> line(static_cast<size_t>(line_bytes));
  for (uint32_t i = 0; i < h; ++i) {
    if (TIFFReadScanline(tif.get(), line.data(), i) < 0) fail("'", path, "': cannot read TIFF row ", i);
    for (uint32_t j = 0; j < w; ++j) {
      uint16_t v = line[j];
      if (bits == 16) std::memcpy(&v, line.data() + 2 * static_cast<size_t>(j), 2);
      img.pixels[static_cast<size_t>(i) * w + j] = v;
    }
  }
  return img;
}

/// Encodes `rows` with libpng; returns false (png_message says why) when libpng fails. No C++
/// object lives in this frame: libpng's error handler jumps back into it.
bool encode_png(FILE* f, int width, int height, int color_type, int depth, const std::vector<uint8_t>* rows,
                png_text* chunks, int chunk_count) {
  png_structp png = png_create_write_struct(PNG_LIBPNG_VER_STRING, nullptr, png_quiet_error, png_quiet_warning);
  if (!png) {
    png_message = "out of memory";
    return false;
  }
  png_infop info = png_create_info_struct(png);
  if (setjmp(png_jmpbuf(png))) {
    png_destroy_write_struct(&png, &info);
    return false;
  }
  png_init_io(png, f);
  png_set_IHDR(png, info, width, height, depth, color_type, PNG_INTERLACE_NONE, PNG_COMPRESSION_TYPE_DEFAULT,
               PNG_FILTER_TYPE_DEFAULT);
  if (chunk_count > 0) png_set_text(png, info, chunks, chunk_count);
  png_write_info(png, info);
  for (int i = 0; i < height; ++i) png_write_row(png, rows[i].data());
  png_write_end(png, nullptr);
  png_destroy_write_struct(&png, &info);
  return true;
}

void write_png(const std::string& path, int width, int height, int color_type, int depth,
               const std::vector<std::vector<uint8_t>>& rows,
               const std::vector<std::pair<std::string, std::string>>& text) {
  if (rows.size() != static_cast<size_t>(height))
    fail("PNG '", path, "': ", rows.size(), " rows for a height of ", height);
  write_atomically(path, [&](const std::string& temp) {
    std::unique_ptr<FILE, FileCloser> f(std::fopen(temp.c_str(), "wb"));
    if (!f) fail("cannot create '", temp, "' (folder missing or not writable?)");
    std::vector<png_text> chunks(text.size());
    for (size_t k = 0; k < text.size(); ++k) {
      chunks[k].compression = PNG_TEXT_COMPRESSION_NONE;
      chunks[k].key = const_cast<char*>(text[k].first.c_str());
      chunks[k].text = const_cast<char*>(text[k].second.c_str());
    }
    if (!encode_png(f.get(), width, height, color_type, depth, rows.data(), chunks.data(),
                    static_cast<int>(chunks.size())))
      fail("error while writing PNG '", path, "' (", png_message, ")");
  });
}

}  // namespace

GrayImage read_gray_image(const std::string& path) {
  const std::string ext = lower_extension(path);
  if (ext == ".png" || ext == ".tif" || ext == ".tiff") require_regular_file(path, "image file");
  if (ext == ".png") return read_png(path);
  if (ext == ".tif" || ext == ".tiff") return read_tiff(path);
  fail("'", path, "': unknown image type '", ext, "' (use .png, .tif or .tiff)");
}

void write_png_gray(const std::string& path, const GrayImage& image) {
  if (image.bits != 8 && image.bits != 16) fail("PNG depth must be 8 or 16 bit, got ", image.bits);
  std::vector<std::vector<uint8_t>> rows(image.height);
  for (int i = 0; i < image.height; ++i) {
    auto& row = rows[i];
    for (int j = 0; j < image.width; ++j) {
      const uint16_t v = image.pixels[static_cast<size_t>(i) * image.width + j];
      if (image.bits == 16) {
        row.push_back(static_cast<uint8_t>(v >> 8));  // PNG is big-endian
        row.push_back(static_cast<uint8_t>(v & 0xff));
      } else {
        row.push_back(static_cast<uint8_t>(v));
      }
    }
  }
  write_png(path, image.width, image.height, PNG_COLOR_TYPE_GRAY, image.bits, rows, {});
}

void write_png_rgb(const std::string& path, const RgbImage& image,
                   const std::vector<std::pair<std::string, std::string>>& text) {
  std::vector<std::vector<uint8_t>> rows(image.height);
  for (int i = 0; i < image.height; ++i)
    rows[i].assign(image.rgb.begin() + static_cast<size_t>(i) * image.width * 3,
                   image.rgb.begin() + static_cast<size_t>(i + 1) * image.width * 3);
  write_png(path, image.width, image.height, PNG_COLOR_TYPE_RGB, 8, rows, text);
}

void write_tiff_gray(const std::string& path, const GrayImage& image) {
  write_atomically(path, [&](const std::string& temp) {
    std::unique_ptr<TIFF, decltype(&TIFFClose)> tif(TIFFOpen(temp.c_str(), "w"), &TIFFClose);
    if (!tif) fail("cannot create TIFF '", temp, "'");
    TIFFSetField(tif.get(), TIFFTAG_IMAGEWIDTH, image.width);
    TIFFSetField(tif.get(), TIFFTAG_IMAGELENGTH, image.height);
    TIFFSetField(tif.get(), TIFFTAG_BITSPERSAMPLE, image.bits);
    TIFFSetField(tif.get(), TIFFTAG_SAMPLESPERPIXEL, 1);
    TIFFSetField(tif.get(), TIFFTAG_PHOTOMETRIC, PHOTOMETRIC_MINISBLACK);
    TIFFSetField(tif.get(), TIFFTAG_PLANARCONFIG, PLANARCONFIG_CONTIG);
    std::vector<uint8_t> line(static_cast<size_t>(image.width) * (image.bits / 8));
    for (int i = 0; i < image.height; ++i) {
      for (int j = 0; j < image.width; ++j) {
        const uint16_t v = image.pixels[static_cast<size_t>(i) * image.width + j];
        if (image.bits == 16)
          reinterpret_cast<uint16_t*>(line.data())[j] = v;
        else
          line[j] = static_cast<uint8_t>(v);
      }
      if (TIFFWriteScanline(tif.get(), line.data(), i, 0) < 0) fail("error while writing TIFF '", path, "'");
    }
  });
}

void write_tiff_float32(const std::string& path, int width, int height, const std::vector<float>& values) {
  if (width <= 0 || height <= 0 || values.size() != static_cast<size_t>(width) * height)
    fail("float TIFF '", path, "': ", values.size(), " values for ", width, " x ", height, " pixels");
  write_atomically(path, [&](const std::string& temp) {
    std::unique_ptr<TIFF, decltype(&TIFFClose)> tif(TIFFOpen(temp.c_str(), "w"), &TIFFClose);
    if (!tif) fail("cannot create TIFF '", temp, "'");
    TIFFSetField(tif.get(), TIFFTAG_IMAGEWIDTH, width);
    TIFFSetField(tif.get(), TIFFTAG_IMAGELENGTH, height);
    TIFFSetField(tif.get(), TIFFTAG_BITSPERSAMPLE, 32);
    TIFFSetField(tif.get(), TIFFTAG_SAMPLEFORMAT, SAMPLEFORMAT_IEEEFP);
    TIFFSetField(tif.get(), TIFFTAG_SAMPLESPERPIXEL, 1);
    TIFFSetField(tif.get(), TIFFTAG_PHOTOMETRIC, PHOTOMETRIC_MINISBLACK);
    TIFFSetField(tif.get(), TIFFTAG_PLANARCONFIG, PLANARCONFIG_CONTIG);
    std::vector<float> line(static_cast<size_t>(width));
    for (int i = 0; i < height; ++i) {
      std::copy(values.begin() + static_cast<std::ptrdiff_t>(i) * width,
                values.begin() + static_cast<std::ptrdiff_t>(i + 1) * width, line.begin());
      if (TIFFWriteScanline(tif.get(), line.data(), i, 0) < 0) fail("error while writing TIFF '", path, "'");
    }
  });
}

}  // namespace orderband
