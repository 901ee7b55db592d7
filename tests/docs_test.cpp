// Documentation and demo data stay in step with the code.
#include <gtest/gtest.h>

#include "test_util.hpp"

namespace covey {
namespace {

using testing_util::read_file;
using testing_util::run_shell;

TEST(Docs, CliReferenceMatchesHelpTexts) {
  testing_util::TempDir dir;
  const std::string fresh = dir.file("cli.md");
  const auto r = run_shell(std::string(COVEY_SOURCE_DIR) + "/docs/generate_cli_reference.sh " +
                           COVEY_BINARY + " > " + fresh);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_EQ(read_file(fresh), read_file(std::string(COVEY_SOURCE_DIR) + "/docs/cli.md"))
      << "docs/cli.md drifted from the --help texts: run `make cli-docs`";
}

TEST(Docs, DemoDataReproducedByteForByte) {
  testing_util::TempDir dir;
  const std::string src = std::string(COVEY_SOURCE_DIR) + "/examples/";
  const auto r = run_shell(std::string(COVEY_REFERENCE_PYTHON) + " " + src +
                           "generate_orchard.py " + dir.path());
  ASSERT_EQ(r.exit_code, 0) << r.err;
  for (const char* name : {"orchard_inspections.csv", "orchard_inspections_truth.tsv",
                           "orchard_sensors.csv", "orchard_sensors_truth.tsv"}) {
    EXPECT_EQ(read_file(dir.file(name)), read_file(src + name)) << name;
  }
}

}  // namespace
}  // namespace covey
