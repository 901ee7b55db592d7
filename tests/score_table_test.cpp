// Score table: validation, O(1) lookup, canonical order, HDF5 and TSV round trips.
#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>

#include "covey/core/error.hpp"
#include "covey/scores/score_io.hpp"
#include "covey/scores/score_table.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

TEST(ScoreTable, LookupAndCanonicalOrder) {
  ScoreTable t = testing_util::random_full_table(5, 3, 42);
  for (int v = 0; v < 5; ++v) {
    auto masks = t.parent_sets(v);
    for (std::size_t i = 0; i < masks.size(); ++i) {
      EXPECT_EQ(t.find(v, masks[i]), static_cast<long>(i));
      EXPECT_EQ(t.log_score(v, masks[i]), t.log_scores(v)[i]);
      if (i) {
        EXPECT_LE(__builtin_popcountll(masks[i - 1]), __builtin_popcountll(masks[i]));
      }
    }
    EXPECT_EQ(t.log_score(v, 0b1111), -INFINITY);  // 4 parents exceed in-degree 3
  }
}

TEST(ScoreTable, RejectsDuplicatesAndNonFinite) {
  std::vector<Variable> vars{{"a", VariableKind::kDiscrete, {}},
                             {"b", VariableKind::kDiscrete, {}}};
  std::vector<NodeScores> nodes(2);
  nodes[0] = {{1}, {0, 1, 1}, {0.0, 1.0, 2.0}};
  nodes[1] = {{0}, {0}, {0.0}};
  EXPECT_THROW(ScoreTable(vars, nodes), InputError);
  nodes[0] = {{1}, {0, 1}, {0.0, NAN}};
  EXPECT_THROW(ScoreTable(vars, nodes), InputError);
  nodes[0] = {{1}, {}, {}};
  EXPECT_THROW(ScoreTable(vars, nodes), InputError);
}

TEST(ScoreIo, Hdf5RoundTrip) {
  ScoreTable t = testing_util::random_full_table(6, 2, 7);
  t.metadata().score = "bdeu";
  t.metadata().parameters = {{"equivalent_sample_size", 1.0}};
  testing_util::TempDir dir;
  const std::string path = dir.file("scores.h5");
  write_scores_hdf5(t, path);
  const ScoreTable back = read_scores_hdf5(path);
  ASSERT_EQ(back.num_variables(), 6);
  EXPECT_EQ(back.fingerprint(), t.fingerprint());
  EXPECT_NE(testing_util::random_full_table(6, 2, 8).fingerprint(), t.fingerprint());
  EXPECT_EQ(back.metadata().score, "bdeu");
  EXPECT_EQ(attribute_number(back.metadata().parameters, "equivalent_sample_size"), 1.0);
  for (int v = 0; v < 6; ++v) {
    ASSERT_EQ(back.num_parent_sets(v), t.num_parent_sets(v));
    for (std::size_t i = 0; i < t.num_parent_sets(v); ++i) {
      EXPECT_EQ(back.parent_sets(v)[i], t.parent_sets(v)[i]);
      EXPECT_EQ(back.log_scores(v)[i], t.log_scores(v)[i]);
    }
  }
}

// Every writer refuses an existing file unless asked to replace it (the CLI's --force): an
// OptionError naming the file and {overwrite}, the file as it was.
TEST(ScoreIo, WritersRefuseAnExistingFileUnlessOverwrite) {
  const ScoreTable t = testing_util::random_full_table(4, 2, 12);
  testing_util::TempDir dir;
  for (const std::string name : {"s.tsv", "s.h5"}) {
    const std::string path = dir.file(name);
    testing_util::write_file(path, "the user's file\n");
    try {
      save_scores(t, path);
      ADD_FAILURE() << name << " replaced without overwrite";
    } catch (const OptionError& e) {
      EXPECT_NE(e.message_template().find(path + ": exists; {overwrite}"), std::string::npos)
          << e.what();
    }
    EXPECT_EQ(testing_util::read_file(path), "the user's file\n");
    save_scores(t, path, true);
    EXPECT_EQ(load_scores(path).fingerprint(), t.fingerprint());
  }
  EXPECT_THROW(write_scores_hdf5(t, dir.file("s.h5")), OptionError);
  EXPECT_THROW(write_scores_tsv(t, dir.file("s.tsv")), OptionError);
}

TEST(ScoreIo, TsvRoundTripIsExact) {
  const ScoreTable t = testing_util::random_full_table(4, 3, 11);
  testing_util::TempDir dir;
  write_scores_tsv(t, dir.file("s.tsv"));
  const ScoreTable back = read_scores_tsv(dir.file("s.tsv"));
  for (int v = 0; v < 4; ++v)
    for (ParentMask g : t.global_parent_sets(v))
      EXPECT_EQ(back.log_score_global(v, g), t.log_score_global(v, g));
}

TEST(ScoreIo, TsvErrorsNameTheLine) {
  testing_util::TempDir dir;
  const std::string head = "variables\ta\tb\nnode\tparents\tlog_score\n";
  const std::vector<std::pair<std::string, std::string>> cases = {
      {head + "a\t\t-1\nc\t\t-2\n", ":4: unknown variable 'c'"},
      {head + "a\t\t-1\na\t\t-2\nb\t\t0\n", ":4: duplicate row"},
      {head + "a\ta\t-1\n", ":3: node 'a' is among its own parents"},
      {head + "a\t\tinf\n", ":3: non-finite log score"},
      {head + "a\t\t-1\tx\n", ":3: expected 3 tab-separated fields"},
      {head + "a\t\t-1\n", "node 'b' has no row at all"},
      {head + "a\tz\t-1\n", ":3: unknown parent 'z'"},
      {head + "a\t\tabc\n", ":3: malformed log score"},
  };
  for (const auto& [text, fragment] : cases) {
    const std::string path = dir.file("bad.tsv");
    std::ofstream(path) << text;
    try {
      read_scores_tsv(path);
      ADD_FAILURE() << "accepted: " << text;
    } catch (const InputError& e) {
      EXPECT_NE(std::string(e.what()).find(fragment), std::string::npos) << e.what();
    }
  }
}

}  // namespace
}  // namespace covey
