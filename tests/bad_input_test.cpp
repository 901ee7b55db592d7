// The bad-input matrix: every row of tests/bad_inputs.tsv runs one covey command on a prepared
// bad input (malformed CSV and TSV, unknown names, impossible options, truncated and corrupted
// HDF5 files) and checks the expected message fragment, the exit code, and that the folder of
// inputs and outputs is byte for byte what it was: no output replaced, no partial output and no
// temporary file left behind.
//
// Row format (tab-separated; '#' lines are comments): name, command, fragment, exit code. In the
// command, {FILE} stands for a prepared file of that name in the row's folder; files are made on
// demand by the preparers below (an `out.*` file is a pre-existing output the command must not
// touch).
#include <gtest/gtest.h>

#include <H5Cpp.h>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <functional>
#include <map>
#include <regex>
#include <set>
#include <sstream>

#include "covey/scores/score_io.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

using testing_util::read_file;
using testing_util::run_covey;
using testing_util::TempDir;
using testing_util::write_file;

struct Row {
  std::string name, command, fragment;
  int exit_code = 0;
};

std::vector<Row> load_rows() {
  const std::string path = std::string(COVEY_SOURCE_DIR) + "/tests/bad_inputs.tsv";
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot read " + path);
  std::vector<Row> rows;
  std::string line;
  int line_no = 0;
  while (std::getline(in, line)) {
    ++line_no;
    if (line.empty() || line[0] == '#') continue;
    std::vector<std::string> f;
    std::stringstream ss(line);
    for (std::string cell; std::getline(ss, cell, '\t');) f.push_back(cell);
    if (f.size() != 4)
      throw std::runtime_error(path + ":" + std::to_string(line_no) + ": expected 4 fields");
    rows.push_back({f[0], f[1], f[2], std::stoi(f[3])});
  }
  return rows;
}

// A discrete data set with 5 columns and 40 rows from a fixed linear congruential stream.
std::string good_csv() {
  std::string s = "a,b,c,d,e\n";
  std::uint64_t x = 12345;
  for (int r = 0; r < 40; ++r) {
    for (int c = 0; c < 5; ++c) {
      x = x * 6364136223846793005ULL + 1442695040888963407ULL;
      s += (c ? "," : "") + std::string(1, static_cast<char>('x' + (x >> 62) % 3));
    }
    s += "\n";
  }
  return s;
}

std::string gaussian_csv() {
  std::string s = "u,v,w\n";
  std::uint64_t x = 777;
  for (int r = 0; r < 30; ++r) {
    for (int c = 0; c < 3; ++c) {
      x = x * 6364136223846793005ULL + 1442695040888963407ULL;
      s += (c ? "," : "") + std::to_string(static_cast<double>(x >> 40) / 1e5);
    }
    s += "\n";
  }
  return s;
}

// Flips bytes in the middle of the first stored chunk of `dataset` (located through the HDF5 C
// API), so that the chunk's Fletcher32 checksum no longer matches.
void corrupt_chunk(const std::string& path, const std::string& dataset) {
  haddr_t address = 0;
  hsize_t size = 0;
  {
    H5::H5File file(path, H5F_ACC_RDONLY);
    H5::DataSet ds = file.openDataSet(dataset);
    H5::DataSpace space = ds.getSpace();
    unsigned mask = 0;
    std::vector<hsize_t> offset(space.getSimpleExtentNdims());
    if (H5Dget_chunk_info(ds.getId(), space.getId(), 0, offset.data(), &mask, &address, &size) < 0)
      throw std::runtime_error(path + ": no chunk info for " + dataset);
  }
  if (size < 8) throw std::runtime_error(path + ": chunk too small");
  std::fstream f(path, std::ios::in | std::ios::out | std::ios::binary);
  for (hsize_t i = size / 2 - 2; i < size / 2 + 2; ++i) {
    f.seekg(static_cast<std::streamoff>(address + i));
    char c = 0;
    f.get(c);
    f.seekp(static_cast<std::streamoff>(address + i));
    f.put(static_cast<char>(c ^ 0x5a));
  }
  if (!f) throw std::runtime_error(path + ": cannot corrupt");
}

void truncate_copy(const std::string& from, const std::string& to, double fraction) {
  const std::string bytes = read_file(from);
  write_file(to, bytes.substr(0, static_cast<std::size_t>(bytes.size() * fraction)));
}

void run_ok(const std::string& args) {
  const auto r = run_covey(args);
  if (r.exit_code != 0) throw std::runtime_error("preparing: covey " + args + ": " + r.err);
}

// Makes the prepared files of one row's folder on demand (a preparer may need others first).
class Inputs {
 public:
  explicit Inputs(const TempDir& dir) : dir_(dir) {
    auto text = [this](const std::string& name, std::string content) {
      preparers_[name] = [this, name, content] { write_file(dir_.file(name), content); };
    };
    text("good.csv", good_csv());
    text("gauss.csv", gaussian_csv());
    text("empty.csv", "");
    text("header_only.csv", "a,b,c\n");
    text("ragged.csv", "a,b,c\nx,y,z\nx,y\nz,y,x\n");
    text("dup_header.csv", "a,b,a\nx,y,z\ny,z,x\n");
    text("open_quote.csv", "a,b\nx,\"y\ny,x\n");
    text("missing.csv", "a,b,c\nx,y,z\nx,,z\ny,x,z\nz,z,x\n");
    text("constant.csv", "a,b\nx,p\ny,p\nx,p\ny,p\n");
    text("not_finite.csv", "u,v\n1.5,2\ninf,3\n0.5,1\n2,2\n");
    text("one.csv", "a\n1\n2\n3\n");
    text("mixed.csv", "x,n\na,1.5\nb,2\na,0.5\n");
    text("require_mixed.tsv", "n\tx\n");
    text("one_var.tsv", "variables\ta\nnode\tparents\tlog_score\na\t\t-1\n");
    text("count_negative.csv", "a,b,n\nx,u,2\ny,v,-1\n");
    text("bad_score.tsv",
         "variables\ta\tb\nnode\tparents\tlog_score\na\t\t-1\na\tb\tlots\nb\t\t-2\n");
    text("unknown_parent.tsv",
         "variables\ta\tb\nnode\tparents\tlog_score\na\t\t-1\na\tz\t-3\nb\t\t-2\n");
    text("unknown_node.tsv", "variables\ta\tb\nnode\tparents\tlog_score\na\t\t-1\nq\t\t-2\n");
    text("no_header.tsv", "a\t\t-1\nb\t\t-2\n");
    text("dup_row.tsv", "variables\ta\tb\nnode\tparents\tlog_score\na\t\t-1\na\t\t-1\nb\t\t-2\n");
    text("nan_score.tsv", "variables\ta\tb\nnode\tparents\tlog_score\na\t\tnan\nb\t\t-2\n");
    text("text.h5", "this is not an HDF5 file\n");
    text("forbid_unknown.tsv", "a\tnosuch\n");
    text("start_cycle.tsv", "a\tb\nb\tc\nc\ta\n");
    text("start_unknown.tsv", "a\tnosuch\n");
    text("draws_ragged.csv", "chain,iteration,x\n1,1,0.5\n1,2\n");
    text("draws_no_chain.csv", "iteration,x\n1,0.5\n2,0.7\n");
    text("draws_nan.csv", "chain,iteration,x\n1,1,0.5\n1,2,abc\n");
    text("draws_empty.csv", "");
    for (const char* out : {"out.h5", "out.tsv", "out.dot", "out.csv"})
      text(out, std::string("previous output, must survive\n"));
    preparers_["scores.tsv"] = [this] {
      write_scores_tsv(testing_util::random_full_table(5, 2, 4242), dir_.file("scores.tsv"));
    };
    preparers_["other.tsv"] = [this] {
      write_scores_tsv(testing_util::random_full_table(5, 2, 99), dir_.file("other.tsv"));
    };
    preparers_["scores.h5"] = [this] {
      write_scores_hdf5(testing_util::random_full_table(5, 2, 4242), dir_.file("scores.h5"));
    };
    preparers_["corrupt_scores.h5"] = [this] {
      std::filesystem::copy_file(file("scores.h5"), dir_.file("corrupt_scores.h5"));
      corrupt_chunk(dir_.file("corrupt_scores.h5"), first_dataset(dir_.file("corrupt_scores.h5")));
    };
    preparers_["truncated_scores.h5"] = [this] {
      truncate_copy(file("scores.h5"), dir_.file("truncated_scores.h5"), 0.6);
    };
    preparers_["seven.tsv"] = [this] {
      write_scores_tsv(testing_util::random_full_table(7, 2, 4243), dir_.file("seven.tsv"));
    };
    // 40 variables with in-degree <= 1 (every single parent allowed): a small table, far beyond
    // the exact engines.
    preparers_["wide.tsv"] = [this] {
      std::string t = "variables";
      for (int v = 0; v < 40; ++v) t += "\tV" + std::to_string(v);
      t += "\nnode\tparents\tlog_score\n";
      for (int v = 0; v < 40; ++v) {
        t += "V" + std::to_string(v) + "\t\t-1\n";
        for (int u = 0; u < 40; ++u)
          if (u != v) t += "V" + std::to_string(v) + "\tV" + std::to_string(u) + "\t-2\n";
      }
      write_file(dir_.file("wide.tsv"), t);
    };
    preparers_["run.h5"] = [this] {
      run_ok("chain " + file("scores.tsv") + " --chains 2 --steps 4000 --thin 10 --seed 3 -o " +
             dir_.file("run.h5"));
    };
    preparers_["other_run.h5"] = [this] {
      run_ok("chain " + file("other.tsv") + " --chains 2 --steps 4000 --thin 10 --seed 3 -o " +
             dir_.file("other_run.h5"));
    };
    preparers_["corrupt_run.h5"] = [this] {
      std::filesystem::copy_file(file("run.h5"), dir_.file("corrupt_run.h5"));
      corrupt_chunk(dir_.file("corrupt_run.h5"), "/chain_000/draws");
    };
    preparers_["truncated_run.h5"] = [this] {
      truncate_copy(file("run.h5"), dir_.file("truncated_run.h5"), 0.5);
    };
    preparers_["sampler.h5"] = [this] {
      run_ok("draw " + file("scores.tsv") + " --cover 1 --draws 10 --save-sampler " +
             dir_.file("sampler.h5"));
    };
    preparers_["corrupt_sampler.h5"] = [this] {
      std::filesystem::copy_file(file("sampler.h5"), dir_.file("corrupt_sampler.h5"));
      corrupt_chunk(dir_.file("corrupt_sampler.h5"),
                    first_dataset(dir_.file("corrupt_sampler.h5")));
    };
  }

  // The path of a prepared file (made now if it does not exist yet).
  std::string file(const std::string& name) {
    const std::string path = dir_.file(name);
    if (std::filesystem::exists(path)) return path;
    auto it = preparers_.find(name);
    if (it == preparers_.end()) throw std::runtime_error("no preparer for {" + name + "}");
    it->second();
    return path;
  }

  std::string substitute(const std::string& command) {
    static const std::regex placeholder(R"(\{([A-Za-z0-9_.]+)\})");
    std::string out;
    auto begin = std::sregex_iterator(command.begin(), command.end(), placeholder);
    std::size_t last = 0;
    for (auto it = begin; it != std::sregex_iterator(); ++it) {
      out += command.substr(last, it->position() - last) + file((*it)[1]);
      last = it->position() + it->length();
    }
    return out + command.substr(last);
  }

 private:
  // The largest chunked dataset of a file: a corruption there is certain to be read.
  static std::string first_dataset(const std::string& path) {
    H5::H5File f(path, H5F_ACC_RDONLY);
    std::string best;
    hsize_t best_size = 0;
    std::function<void(const std::string&)> visit = [&](const std::string& group) {
      H5::Group g = f.openGroup(group);
      for (hsize_t i = 0; i < g.getNumObjs(); ++i) {
        const std::string name = g.getObjnameByIdx(i);
        const std::string full = (group == "/" ? "/" : group + "/") + name;
        if (g.getObjTypeByIdx(i) == H5G_GROUP) {
          visit(full);
        } else if (g.getObjTypeByIdx(i) == H5G_DATASET) {
          H5::DataSet ds = g.openDataSet(name);
          if (ds.getCreatePlist().getLayout() != H5D_CHUNKED) continue;
          const hsize_t size = ds.getStorageSize();
          if (size > best_size) best = full, best_size = size;
        }
      }
    };
    visit("/");
    if (best.empty()) throw std::runtime_error(path + ": no chunked dataset");
    return best;
  }

  const TempDir& dir_;
  std::map<std::string, std::function<void()>> preparers_;
};

// Every file of the folder with its content.
std::map<std::string, std::string> snapshot(const std::string& dir) {
  std::map<std::string, std::string> files;
  for (const auto& e : std::filesystem::directory_iterator(dir))
    files[e.path().filename().string()] = read_file(e.path().string());
  return files;
}

class BadInput : public ::testing::TestWithParam<Row> {};

TEST_P(BadInput, MessageExitCodeAndNoOutputChanged) {
  const Row& row = GetParam();
  TempDir dir;
  Inputs inputs(dir);
  const std::string args = inputs.substitute(row.command);
  const auto before = snapshot(dir.path());
  const auto r = run_covey(args);
  EXPECT_EQ(r.exit_code, row.exit_code) << "covey " << args << "\nstderr: " << r.err;
  EXPECT_NE(r.err.find(row.fragment), std::string::npos)
      << "covey " << args << "\nexpected fragment: " << row.fragment << "\nstderr: " << r.err;
  // One clear line: the error message is a single line on stderr.
  EXPECT_EQ(std::count(r.err.begin(), r.err.end(), '\n'), 1) << r.err;
  const auto after = snapshot(dir.path());
  for (const auto& [name, content] : after) {
    auto it = before.find(name);
    if (it == before.end())
      ADD_FAILURE() << "covey " << args << " left a new file " << name;
    else
      EXPECT_TRUE(it->second == content) << "covey " << args << " changed " << name;
  }
  for (const auto& [name, content] : before)
    EXPECT_TRUE(after.count(name)) << "covey " << args << " removed " << name;
}

INSTANTIATE_TEST_SUITE_P(Matrix, BadInput, ::testing::ValuesIn(load_rows()),
                         [](const ::testing::TestParamInfo<Row>& info) { return info.param.name; });

// The matrix covers every command of the binary (its top-level help lists them).
TEST(BadInputMatrix, CoversEveryCommand) {
  const auto help = run_covey("--help");
  ASSERT_EQ(help.exit_code, 0);
  const std::string listing = help.out.substr(help.out.find("Subcommands:"));
  std::set<std::string> commands;
  std::istringstream lines(listing);
  std::string line;
  std::getline(lines, line);
  while (std::getline(lines, line)) {
    std::istringstream words(line);
    std::string word;
    if (line.rfind("  ", 0) == 0 && line.size() > 2 && line[2] != ' ' && (words >> word))
      commands.insert(word);
  }
  ASSERT_GE(commands.size(), 9u) << listing;
  std::set<std::string> covered;
  for (const Row& row : load_rows()) covered.insert(row.command.substr(0, row.command.find(' ')));
  for (const auto& c : commands) EXPECT_TRUE(covered.count(c)) << "no bad-input row for " << c;
}

}  // namespace
}  // namespace covey
