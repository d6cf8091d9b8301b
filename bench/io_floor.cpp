// The benchmark's I/O floor: reads the covariate rasters window by window and writes three rasters
// shaped like habcast's outputs (1-band Float32, 3-band Float32, 1-band UInt8; same creation
// options) with a trivial computation, using GDAL's multi-threaded codecs on read and write. No
// tool that reads these inputs and writes these outputs with this codec can be much faster, so
// habcast's wall time is judged against this program's.
//
// Deflate's cost depends on what it compresses, so copies of the inputs are not quite the same
// work as habcast's own output values. With --values DIR (uncompressed copies of habcast's
// suitability.tif, uncertainty.tif and extrapolation.tif, made by run.py) the outputs take those
// exact values instead: the floor then decodes the same inputs and encodes the same output bytes,
// plus a plain read of the uncompressed values (a memory copy from the page cache), so it errs
// on the slow side by that copy.
//
// With --defaults it also writes predict's default extra outputs: a 3-band Float32 novelty.tif and
// a 1-band UInt8 least_similar.tif (with --values DIR, from uncompressed copies of habcast's own in
// DIR), the floor for predict's default run.
//
// With --read-only nothing is written: the time to decode the inputs alone, which no choice of
// output codec or precision (predict --max-error) can go below.
//
// With --mirror DIR the floor stands for a run of several predictions (scenarios, model sets;
// bench/several.py): it reads any number of inputs (each in its own type) and writes, for every
// uncompressed .tif under DIR (copies of that run's outputs), the same file under OUT_DIR with the
// same bands, type and values: the same decoding and encoding work as the run, nothing else.
//
// Usage: habcast_io_floor OUT_DIR FLOAT1.tif FLOAT2.tif FLOAT3.tif FLOAT4.tif BYTE.tif
//                         [--threads N|ALL_CPUS] [--window PIXELS] [--values DIR] [--defaults] [--read-only]
//        habcast_io_floor OUT_DIR INPUT.tif... --mirror DIR [--threads N] [--window PIXELS]
#include <cpl_conv.h>
#include <gdal_priv.h>

#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <memory>
#include <stdexcept>
#include <string>
#include <vector>

namespace {

struct DatasetCloser {
  void operator()(GDALDataset* ds) const {
    // Compression of the last blocks and the TIFF directory happen in GDALClose.
    if (ds != nullptr) GDALClose(GDALDataset::ToHandle(ds));
  }
};
using Dataset = std::unique_ptr<GDALDataset, DatasetCloser>;

struct Args {
  std::string out_dir;
  std::vector<std::string> inputs;  // four Float32 rasters, then one Byte raster
  std::string threads = "ALL_CPUS";
  int window = 1024;
  bool read_only = false;
  bool defaults = false;  // also novelty.tif (3 x Float32) and least_similar.tif (UInt8)
  std::string values_dir;  // uncompressed copies of habcast's outputs, or empty
  std::string mirror_dir;  // uncompressed copies of a several-prediction run's outputs, or empty
};

Args parse(int argc, char** argv) {
  Args a;
  for (int i = 1; i < argc; ++i) {
    const std::string arg = argv[i];
    if (arg == "--threads" && i + 1 < argc) a.threads = argv[++i];
    else if (arg == "--window" && i + 1 < argc) a.window = std::atoi(argv[++i]);
    else if (arg == "--values" && i + 1 < argc) a.values_dir = argv[++i];
    else if (arg == "--read-only") a.read_only = true;
    else if (arg == "--mirror" && i + 1 < argc) a.mirror_dir = argv[++i];
    else if (arg == "--defaults") a.defaults = true;
    else if (a.out_dir.empty()) a.out_dir = arg;
    else a.inputs.push_back(arg);
  }
  if (a.out_dir.empty() || (a.mirror_dir.empty() ? a.inputs.size() != 5 : a.inputs.empty()) || a.window < 1)
    throw std::runtime_error(
        "usage: habcast_io_floor OUT_DIR F1.tif F2.tif F3.tif F4.tif BYTE.tif [--threads N] [--window PIXELS] "
        "[--values DIR] [--defaults] [--read-only]");
  return a;
}

Dataset open_input(const std::string& path, const std::string& threads) {
  const std::string option = "NUM_THREADS=" + threads;
  const char* open_options[] = {option.c_str(), nullptr};
  Dataset ds(GDALDataset::FromHandle(GDALOpenEx(path.c_str(), GDAL_OF_RASTER | GDAL_OF_READONLY, nullptr,
                                                open_options, nullptr)));
  if (!ds) throw std::runtime_error(path + ": cannot open (" + CPLGetLastErrorMsg() + ")");
  return ds;
}

// The same creation options habcast uses by default.
Dataset create_output(const std::string& path, const GDALDataset& like, int bands, GDALDataType type,
                      const std::string& threads) {
  const std::string predictor = type == GDT_Float32 ? "PREDICTOR=3" : "PREDICTOR=2";
  const std::string num_threads = "NUM_THREADS=" + threads;
  const char* options[] = {"TILED=YES",         "BLOCKXSIZE=256",    "BLOCKYSIZE=256", "COMPRESS=DEFLATE",
                           predictor.c_str(),   "BIGTIFF=IF_SAFER",  num_threads.c_str(), nullptr};
  GDALDriver* driver = GetGDALDriverManager()->GetDriverByName("GTiff");
  GDALDataset& source = const_cast<GDALDataset&>(like);
  Dataset ds(driver->Create(path.c_str(), source.GetRasterXSize(), source.GetRasterYSize(), bands, type,
                            const_cast<char**>(options)));
  if (!ds) throw std::runtime_error(path + ": cannot create (" + CPLGetLastErrorMsg() + ")");
  double transform[6];
  if (source.GetGeoTransform(transform) == CE_None) ds->SetGeoTransform(transform);
  ds->SetSpatialRef(source.GetSpatialRef());
  for (int b = 1; b <= bands; ++b) ds->GetRasterBand(b)->SetNoDataValue(type == GDT_Float32 ? -9999.0 : 255.0);
  return ds;
}

void io(GDALRasterBand& band, GDALRWFlag flag, int x, int y, int w, int h, void* data, GDALDataType type) {
  if (band.RasterIO(flag, x, y, w, h, data, w, h, type, 0, 0, nullptr) != CE_None)
    throw std::runtime_error(std::string("RasterIO failed: ") + CPLGetLastErrorMsg());
}

void run(const Args& a) {
  std::vector<Dataset> in;
  for (const std::string& p : a.inputs) in.push_back(open_input(p, a.threads));
  const GDALDataset& ref = *in.front();
  Dataset suitability, uncertainty, flags, novelty, least_similar;
  if (!a.read_only) {
    suitability = create_output(a.out_dir + "/suitability.tif", ref, 1, GDT_Float32, a.threads);
    uncertainty = create_output(a.out_dir + "/uncertainty.tif", ref, 3, GDT_Float32, a.threads);
    flags = create_output(a.out_dir + "/extrapolation.tif", ref, 1, GDT_Byte, a.threads);
    if (a.defaults) {
      novelty = create_output(a.out_dir + "/novelty.tif", ref, 3, GDT_Float32, a.threads);
      least_similar = create_output(a.out_dir + "/least_similar.tif", ref, 1, GDT_Byte, a.threads);
    }
  }
  const int width = in.front()->GetRasterXSize();
  const int height = in.front()->GetRasterYSize();
  const auto n = static_cast<std::size_t>(a.window) * static_cast<std::size_t>(a.window);
  std::vector<std::vector<float>> values(4, std::vector<float>(n));
  std::vector<std::uint8_t> codes(n);
  // Sources of the output values: (dataset, band) per output band, or none for input copies.
  std::vector<Dataset> given;
  if (!a.values_dir.empty()) {
    for (const char* name : {"suitability.tif", "uncertainty.tif", "extrapolation.tif"})
      given.push_back(open_input(a.values_dir + "/" + name, "1"));
    if (a.defaults)
      for (const char* name : {"novelty.tif", "least_similar.tif"}) given.push_back(open_input(a.values_dir + "/" + name, "1"));
  }
  std::vector<float> out_values(given.empty() ? 0 : n);
  std::vector<std::uint8_t> out_codes(given.empty() ? 0 : n);
  for (int y = 0; y < height; y += a.window) {
    const int h = std::min(a.window, height - y);
    for (int x = 0; x < width; x += a.window) {
      const int w = std::min(a.window, width - x);
      for (std::size_t c = 0; c < 4; ++c) io(*in[c]->GetRasterBand(1), GF_Read, x, y, w, h, values[c].data(), GDT_Float32);
      io(*in[4]->GetRasterBand(1), GF_Read, x, y, w, h, codes.data(), GDT_Byte);
      if (a.read_only) continue;
      if (given.empty()) {
        // Trivial computation: each output band takes one input's values.
        io(*suitability->GetRasterBand(1), GF_Write, x, y, w, h, values[0].data(), GDT_Float32);
        for (int b = 1; b <= 3; ++b)
          io(*uncertainty->GetRasterBand(b), GF_Write, x, y, w, h, values[static_cast<std::size_t>(b)].data(),
             GDT_Float32);
        io(*flags->GetRasterBand(1), GF_Write, x, y, w, h, codes.data(), GDT_Byte);
        if (a.defaults) {
          for (int b = 1; b <= 3; ++b)
            io(*novelty->GetRasterBand(b), GF_Write, x, y, w, h, values[static_cast<std::size_t>(b)].data(),
               GDT_Float32);
          io(*least_similar->GetRasterBand(1), GF_Write, x, y, w, h, codes.data(), GDT_Byte);
        }
        continue;
      }
      io(*given[0]->GetRasterBand(1), GF_Read, x, y, w, h, out_values.data(), GDT_Float32);
      io(*suitability->GetRasterBand(1), GF_Write, x, y, w, h, out_values.data(), GDT_Float32);
      for (int b = 1; b <= 3; ++b) {
        io(*given[1]->GetRasterBand(b), GF_Read, x, y, w, h, out_values.data(), GDT_Float32);
        io(*uncertainty->GetRasterBand(b), GF_Write, x, y, w, h, out_values.data(), GDT_Float32);
      }
      io(*given[2]->GetRasterBand(1), GF_Read, x, y, w, h, out_codes.data(), GDT_Byte);
      io(*flags->GetRasterBand(1), GF_Write, x, y, w, h, out_codes.data(), GDT_Byte);
      if (a.defaults) {
        for (int b = 1; b <= 3; ++b) {
          io(*given[3]->GetRasterBand(b), GF_Read, x, y, w, h, out_values.data(), GDT_Float32);
          io(*novelty->GetRasterBand(b), GF_Write, x, y, w, h, out_values.data(), GDT_Float32);
        }
        io(*given[4]->GetRasterBand(1), GF_Read, x, y, w, h, out_codes.data(), GDT_Byte);
        io(*least_similar->GetRasterBand(1), GF_Write, x, y, w, h, out_codes.data(), GDT_Byte);
      }
    }
  }
}

// --mirror: decode every input once per window, and re-encode every output of the run from its
// uncompressed copy, window by window (the same order of work as the run).
void run_mirror(const Args& a) {
  namespace fs = std::filesystem;
  std::vector<Dataset> in;
  for (const std::string& p : a.inputs) in.push_back(open_input(p, a.threads));
  std::vector<Dataset> sources, outputs;
  for (const auto& entry : fs::recursive_directory_iterator(a.mirror_dir)) {
    if (entry.path().extension() != ".tif") continue;
    Dataset src = open_input(entry.path().string(), "1");
    const fs::path target = fs::path(a.out_dir) / fs::relative(entry.path(), a.mirror_dir);
    fs::create_directories(target.parent_path());
    const GDALDataType type = src->GetRasterBand(1)->GetRasterDataType() == GDT_Byte ? GDT_Byte : GDT_Float32;
    outputs.push_back(create_output(target.string(), *in.front(), src->GetRasterCount(), type, a.threads));
    sources.push_back(std::move(src));
  }
  const int width = in.front()->GetRasterXSize();
  const int height = in.front()->GetRasterYSize();
  const auto n = static_cast<std::size_t>(a.window) * static_cast<std::size_t>(a.window);
  std::vector<float> values(n);
  for (int y = 0; y < height; y += a.window) {
    const int h = std::min(a.window, height - y);
    for (int x = 0; x < width; x += a.window) {
      const int w = std::min(a.window, width - x);
      for (Dataset& d : in) {
        GDALRasterBand& b = *d->GetRasterBand(1);
        io(b, GF_Read, x, y, w, h, values.data(), b.GetRasterDataType() == GDT_Byte ? GDT_Byte : GDT_Float32);
      }
      for (std::size_t o = 0; o < outputs.size(); ++o) {
        for (int b = 1; b <= outputs[o]->GetRasterCount(); ++b) {
          const GDALDataType type = outputs[o]->GetRasterBand(b)->GetRasterDataType();
          io(*sources[o]->GetRasterBand(b), GF_Read, x, y, w, h, values.data(), type);
          io(*outputs[o]->GetRasterBand(b), GF_Write, x, y, w, h, values.data(), type);
        }
      }
    }
  }
}

}  // namespace

int main(int argc, char** argv) {
  try {
    GDALAllRegister();
    GDALSetCacheMax64(256LL << 20);
    const Args args = parse(argc, argv);
    if (args.mirror_dir.empty()) run(args);
    else run_mirror(args);
    if (CPLGetLastErrorType() == CE_Failure) throw std::runtime_error(CPLGetLastErrorMsg());
    return 0;
  } catch (const std::exception& e) {
    std::fprintf(stderr, "habcast_io_floor: %s\n", e.what());
    return 1;
  }
}
