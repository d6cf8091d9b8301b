// Never lose a user's file: no output of a run may be one of its inputs or another of its
// outputs (whatever the flags), plots refuse existing files unless --overwrite, and one writer
// at a time per output folder.
#include <fcntl.h>
#include <sys/file.h>
#include <unistd.h>

#include <catch2/catch.hpp>
#include <cmath>
#include <filesystem>
#include <string>

#include "core/base/error.hpp"
#include "pipeline/folder_lock.hpp"
#include "pipeline/run_files.hpp"
#include "test_support.hpp"

namespace {

namespace fs = std::filesystem;
using Catch::Matchers::Contains;
using habcast::test::GridSpec;
using habcast::test::read_text;
using habcast::test::run_cli;
using habcast::test::TempDir;
using habcast::test::write_text;

/// A small model with covariance and training samples over an 8 x 8 raster x.tif.
struct SafetyScene {
  TempDir dir{"safety"};
  std::string model = dir.file("m.toml");
  std::string raster = dir.file("x.tif");
  SafetyScene() {
    GridSpec grid{8, 8};
    habcast::test::write_raster(raster, grid, "Float32", [](int r, int c) { return r * 0.7 + c * 0.3; });
    write_text(dir.file("t.csv"), "x\n1\n2.5\n6\n");
    write_text(model,
               "habcast_model = 1\n[model]\nname = \"scene\"\nfamily = \"binomial\"\n[training]\nsamples = \"t.csv\"\n"
               "[covariates.x]\nraster = \"x.tif\"\ncenter = 3\nscale = 2\n[coefficients]\n"
               "terms = [\"(Intercept)\", \"x\", \"x^2\"]\nestimates = [0.1, 0.8, -0.6]\n"
               "covariance = [[0.1, 0.01, 0.0], [0.01, 0.2, 0.02], [0.0, 0.02, 0.05]]\n");
  }
};

}  // namespace

TEST_CASE("Two names of one file, by a symbolic or a hard link, are one file to the run", "[safety]") {
  TempDir dir("safety-links");
  write_text(dir.file("points.csv"), "x,y\n1,2\n");
  fs::create_symlink(dir.file("points.csv"), dir.file("alias.csv"));
  fs::create_hard_link(dir.file("points.csv"), dir.file("hard.csv"));
  for (const std::string& output : {dir.file("points.csv"), dir.file("alias.csv"), dir.file("hard.csv"),
                                    dir.path().string() + "/./sub/../points.csv"}) {
    INFO(output);
    habcast::RunFiles files;
    files.input("points", dir.file("points.csv"));
    files.output("-o", output);
    CHECK_THROWS_AS(files.check(), habcast::UsageError);
  }
  habcast::RunFiles two;
  two.output("--plot", dir.file("a.svg"));
  two.output("--svg", dir.file("b/../a.svg"));
  CHECK_THROWS_WITH(two.check(), Contains("--plot") && Contains("--svg") && Contains("one file"));
  habcast::RunFiles fine;
  fine.input("points", dir.file("points.csv"));
  fine.output("-o", dir.file("model.toml"));
  CHECK_NOTHROW(fine.check());
}

TEST_CASE("predict refuses a quicklook named like one of its own outputs, naming both", "[safety]") {
  SafetyScene s;
  const std::string out = s.dir.file("qlc");
  std::string err;
  CHECK(run_cli({"predict", s.model, "-o", out, "-q", "--quicklook", out + "/suitability.tif"}, nullptr, &err) == 2);
  CHECK_THAT(err, Contains("--quicklook") && Contains("output suitability.tif"));
  CHECK_FALSE(fs::exists(out + "/suitability.tif"));
}

TEST_CASE("predict refuses, even with --overwrite, a quicklook or output folder that would replace an input",
          "[safety]") {
  SafetyScene s;
  const std::string before = read_text(s.raster);
  std::string err;
  CHECK(run_cli({"predict", s.model, "-o", s.dir.file("o1"), "-q", "--overwrite", "--quicklook", s.raster}, nullptr,
                &err) == 2);
  CHECK_THAT(err, Contains("--quicklook") && Contains("raster of covariate x"));

  // The covariate lives in the output folder under an output's name, directly or through a link.
  const std::string out = s.dir.file("o2");
  fs::create_directories(out);
  fs::copy_file(s.raster, out + "/suitability.tif");
  CHECK(run_cli({"predict", s.model, "-c", "x=" + out + "/suitability.tif", "-o", out, "-q", "--overwrite"}, nullptr,
                &err) == 2);
  CHECK_THAT(err, Contains("output suitability.tif") && Contains("raster of covariate x"));
  CHECK(read_text(out + "/suitability.tif") == before);

  const std::string out3 = s.dir.file("o3");
  fs::create_directories(out3);
  fs::create_symlink(s.raster, out3 + "/novelty.tif");
  CHECK(run_cli({"predict", s.model, "-o", out3, "-q", "--overwrite", "--checks", "range"}, nullptr, &err) == 2);
  CHECK_THAT(err, Contains("novelty.tif") && Contains("which is " + fs::canonical(s.raster).string()));
  CHECK(read_text(s.raster) == before);
}

TEST_CASE("describe's plots refuse an existing file unless --overwrite, and never replace the model", "[safety]") {
  TempDir dir("safety-describe");
  for (const char* name : {"demo-model.toml", "training.csv"})
    fs::copy_file(habcast::test::source_path(std::string("sample-rasters/") + name), dir.file(name));
  const std::string model = dir.file("demo-model.toml");
  const std::string model_text = read_text(model);
  std::string err;
  CHECK(run_cli({"describe", model, "--pair", "precip,tmin", "--plot", model, "--overwrite"}, nullptr, &err) == 2);
  CHECK_THAT(err, Contains("--plot") && Contains("model file"));
  CHECK(run_cli({"describe", model, "--pair", "precip,tmin", "--plot-png", dir.file("training.csv"), "--overwrite"},
                nullptr, &err) == 2);
  CHECK_THAT(err, Contains("--plot-png") && Contains("training samples"));
  CHECK(read_text(model) == model_text);

  write_text(dir.file("niche.svg"), "mine");
  CHECK(run_cli({"describe", model, "--pair", "precip,tmin", "--plot", dir.file("niche.svg")}, nullptr, &err) == 2);
  CHECK_THAT(err, Contains("niche.svg already exists") && Contains("--overwrite"));
  CHECK(read_text(dir.file("niche.svg")) == "mine");
  CHECK(run_cli({"describe", model, "--pair", "precip,tmin", "--plot", dir.file("niche.svg"), "--overwrite"}) == 0);
  CHECK(read_text(dir.file("niche.svg")).starts_with("<"));
}

TEST_CASE("evaluate never writes its binary map onto its own --prediction, even with --overwrite", "[safety]") {
  SafetyScene s;
  REQUIRE(run_cli({"predict", s.model, "-o", s.dir.file("out"), "-q"}) == 0);
  const std::string prediction = s.dir.file("out/suitability.tif");
  const std::string before = read_text(prediction);
  write_text(s.dir.file("pts.csv"), "x,y,seen\n500150,3999850,1\n500450,3999450,0\n");
  std::string err;
  CHECK(run_cli({"evaluate", s.dir.file("pts.csv"), "--prediction", prediction, "--crs", "EPSG:32630", "--response",
                 "seen", "--write-binary", prediction, "--overwrite"},
                nullptr, &err) == 2);
  CHECK_THAT(err, Contains("--write-binary") && Contains("--prediction"));
  CHECK(read_text(prediction) == before);
}

TEST_CASE("fit never writes its samples table over the survey points, even with --overwrite", "[safety]") {
  SafetyScene s;
  const std::string points = s.dir.file("survey.csv");
  write_text(points, "x,y,presence\n500150,3999850,1\n500450,3999450,0\n500250,3999650,1\n");
  const std::string before = read_text(points);
  std::string err;
  CHECK(run_cli({"fit", points, "-c", "x=" + s.raster, "-f", "presence ~ x", "--crs", "EPSG:32630", "-o",
                 s.dir.file("m2.toml"), "--samples", points, "--overwrite"},
                nullptr, &err) == 2);
  CHECK_THAT(err, Contains("samples table") && Contains("points"));
  CHECK(read_text(points) == before);
}

TEST_CASE("batch refuses up front a tile whose output folder holds an input named like an output", "[safety]") {
  SafetyScene s;
  // output = "." and the tile pattern put each tile's outputs beside its rasters; the covariate
  // "suitability" is read from tiles/a/suitability.tif, which the tile would write.
  const std::string tile = s.dir.file("tiles/a");
  fs::create_directories(tile);
  fs::copy_file(s.raster, tile + "/suitability.tif");
  write_text(s.dir.file("m3.toml"),
             "habcast_model = 1\n[model]\nfamily = \"binomial\"\n[covariates.suitability]\ncenter = 3\nscale = 2\n"
             "[coefficients]\nterms = [\"(Intercept)\", \"suitability\"]\nestimates = [0.1, 0.8]\n");
  write_text(s.dir.file("b.toml"), "habcast_batch = 1\nmodel = \"m3.toml\"\noutput = \".\"\n[tiles]\npattern = "
                                   "\"tiles/{tile}/{covariate}.tif\"\n");
  const std::string before = read_text(tile + "/suitability.tif");
  std::string err;
  CHECK(run_cli({"batch", s.dir.file("b.toml"), "-q"}, nullptr, &err) == 2);
  CHECK_THAT(err, Contains("tile a output suitability.tif") && Contains("raster of covariate suitability"));
  CHECK(read_text(tile + "/suitability.tif") == before);
}

TEST_CASE("A second writer into a locked output folder is refused, told who holds it", "[safety]") {
  SafetyScene s;
  const std::string out = s.dir.file("out");
  fs::create_directories(out);
  // Another process's lock: a separate open file description conflicts like another process.
  const int fd = open((out + "/.habcast.lock").c_str(), O_RDWR | O_CREAT | O_CLOEXEC, 0644);
  REQUIRE(fd >= 0);
  REQUIRE(flock(fd, LOCK_EX | LOCK_NB) == 0);
  const std::string holder = "host far-node, boot 1234, pid 99, started 2026-01-01T00:00:00Z\n";
  REQUIRE(write(fd, holder.data(), holder.size()) == static_cast<ssize_t>(holder.size()));
  std::string err;
  CHECK(run_cli({"predict", s.model, "-o", out, "-q"}, nullptr, &err) == 2);
  CHECK_THAT(err, Contains("in use by another habcast run") && Contains("far-node") && Contains("pid 99"));
  CHECK(habcast::test::list_dir(out) == std::vector<std::string>{".habcast.lock"});
  close(fd);  // the other run ends: its lock goes with it, and the file it left is taken over
  CHECK(run_cli({"predict", s.model, "-o", out, "-q"}) == 0);
  CHECK_FALSE(fs::exists(out + "/.habcast.lock"));
  CHECK(fs::exists(out + "/suitability.tif"));
}

TEST_CASE("The lock file says who holds it beyond the pid: host, boot and start", "[safety]") {
  TempDir dir("safety-lock");
  {
    const habcast::FolderLock lock(dir.path().string());
    REQUIRE(lock.held());
    const std::string text = read_text(dir.file(".habcast.lock"));
    CHECK_THAT(text, Contains("host ") && Contains(", boot ") && Contains("pid " + std::to_string(getpid()) + " (start tick ") &&
                         Contains("started "));
    const habcast::FolderLock again(dir.path().string());  // the same process may take it again
    CHECK(again.held());
  }
  CHECK_FALSE(fs::exists(dir.file(".habcast.lock")));
}
