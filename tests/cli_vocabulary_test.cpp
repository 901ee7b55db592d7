// The CLI's one vocabulary (issue 16): one option name, one unit syntax and one default per
// concept across all commands, every default stated in --help, counts typed as 1e5 anywhere, an
// unknown command named with the list of commands, no output replaced without --force, and
// `compare` taking the cover bound of a teleporting run.
//
// The option table comes from the binary itself (`covey --list-options-json`, which walks the
// CLI11 tree of every command), so a new command or option is held to the same rules.
#include <gtest/gtest.h>

#include <algorithm>
#include <filesystem>
#include <map>
#include <regex>
#include <set>
#include <string>
#include <vector>

#include "covey/scores/score_io.hpp"
#include "test_util.hpp"

namespace covey {
namespace {

using nlohmann::json;
using testing_util::read_file;
using testing_util::run_covey;
using testing_util::TempDir;
using testing_util::write_file;

// Second spellings seen before (or likely to creep in) -> the one spelling covey uses.
const std::map<std::string, std::string> kSecondSpellings = {
    {"count", "--draws"},
    {"n-draws", "--draws"},
    {"num-draws", "--draws"},
    {"samples", "--draws"},
    {"exact-draws", "--cover-draws"},
    {"max-seconds", "--max-time"},
    {"load-sampler", "--sampler"},
    {"teleport-sampler", "--sampler"},
    {"time-limit", "--max-time"},
    {"timeout", "--max-time"},
    {"overwrite", "--force"},
    {"replace", "--force"},
    {"min-ess", "--ess"},
    {"max-rhat", "--rhat"},
    {"memory", "--memory-limit"},
    {"max-memory", "--memory-limit"},
    {"limit", "--top"},
    {"head", "--top"},
    {"k", "--cover"},
    {"cover-bound", "--cover"},
    {"jobs", "--threads"},
    {"random-seed", "--seed"},
    {"out", "--output"},
    {"csv", "--draws-csv"},
};

// Options that count things: they take 1e5 as well as 100000 (the COUNT transform).
const std::set<std::string> kCounts = {"draws", "cover-draws", "top"};

// The unit syntax every option of that name shows in its help.
const std::map<std::string, std::string> kUnitExamples = {
    {"max-time", "90s, 10m, 2h"},
    {"memory-limit", "512M, 4G"},
};

// Where an option of a shared name has another default on purpose, and why.
const std::map<std::string, std::map<std::string, std::string>> kOwnDefault = {
    {"features",
     {{"compare", "the log score is not compared (its scale differs by class)"},
      {"export", "the file holds probabilities of indicators; the log score is none"}}},
    {"cover", {{"compare", "the bound comes from the compared results"}}},
    {"max-time", {{"chain", "a stop after wall time, none by default (exact: a refusal)"}}},
};

json option_table() {
  const auto r = run_covey("--list-options-json");
  EXPECT_EQ(r.exit_code, 0) << r.err;
  return json::parse(r.out);
}

// The default an option states: CLI11's captured value, else the words after "default" in its
// help ("(default 1)", "(default: none)").
std::string stated_default(const json& option) {
  const std::string captured = option["default"].get<std::string>();
  if (!captured.empty()) return captured;
  static const std::regex words(R"(default:? ([^;,)]+))");
  const std::string help = option["help"].get<std::string>();
  std::smatch m;
  return std::regex_search(help, m, words) ? m[1].str() : "";
}

// Every breach of the vocabulary in `table` (command -> options), one line each.
std::vector<std::string> vocabulary_problems(const json& table) {
  std::vector<std::string> problems;
  struct Seen {
    std::string command, value;
  };
  std::map<std::string, Seen> defaults;  // option name -> the first command's default
  for (const auto& [command, options] : table.items()) {
    for (const json& option : options) {
      const std::string help = option["help"].get<std::string>();
      for (const std::string name : option["names"]) {
        const std::string where = command + " --" + name;
        if (auto bad = kSecondSpellings.find(name); bad != kSecondSpellings.end())
          problems.push_back(where + ": a second spelling of " + bad->second);
        if (kCounts.count(name) &&
            option["type"].get<std::string>().find("COUNT") == std::string::npos)
          problems.push_back(where + ": a count that does not take 1e5 (type " +
                             option["type"].get<std::string>() + ")");
        if (auto unit = kUnitExamples.find(name);
            unit != kUnitExamples.end() && help.find(unit->second) == std::string::npos)
          problems.push_back(where + ": help without the unit syntax '" + unit->second + "'");
        if (option["flag"] || option["required"]) continue;
        const std::string value = stated_default(option);
        if (value.empty() && help.find("default") == std::string::npos) {
          problems.push_back(where + ": no default stated in --help");
          continue;
        }
        if (auto own = kOwnDefault.find(name);
            own != kOwnDefault.end() && own->second.count(command))
          continue;
        auto [first, inserted] = defaults.emplace(name, Seen{command, value});
        if (!inserted && first->second.value != value)
          problems.push_back(where + ": default '" + value + "', but " + first->second.command +
                             " --" + name + " has '" + first->second.value + "'");
      }
    }
  }
  return problems;
}

TEST(Vocabulary, OneSpellingUnitAndDefaultPerConcept) {
  const json table = option_table();
  ASSERT_GE(table.size(), 12u);
  for (const std::string& problem : vocabulary_problems(table)) ADD_FAILURE() << problem;
}

// The check above must be able to fail: each doctored table breaks one rule.
TEST(Vocabulary, TheCheckFailsOnASecondSpellingAMissingOrDifferentDefault) {
  const json table = option_table();
  auto option_of = [](json& t, const std::string& command, const std::string& name) -> json& {
    for (json& o : t[command])
      if (o["names"][0] == name) return o;
    throw std::runtime_error(command + " has no --" + name);
  };
  json second = table;  // the old spelling of draw's count, back again
  json old = option_of(second, "draw", "draws");
  old["names"] = {"count"};
  second["draw"].push_back(old);
  EXPECT_FALSE(vocabulary_problems(second).empty());

  json other_default = table;  // one command with its own --top default
  option_of(other_default, "compare", "top")["default"] = "15";
  EXPECT_FALSE(vocabulary_problems(other_default).empty());

  json unstated = table;  // an option whose help states no default
  json& cover = option_of(unstated, "exact", "cover");
  cover["help"] = "Also the posterior mass of D_k";
  EXPECT_FALSE(vocabulary_problems(unstated).empty());

  json seconds = table;  // a time limit in plain seconds
  option_of(seconds, "exact", "max-time")["help"] = "Refuse above this many seconds";
  EXPECT_FALSE(vocabulary_problems(seconds).empty());

  json typed = table;  // a count that refuses 1e5
  option_of(typed, "exact", "draws")["type"] = "UINT:POSITIVE";
  EXPECT_FALSE(vocabulary_problems(typed).empty());
}

TEST(Vocabulary, UnknownCommandIsNamedWithTheListOfCommands) {
  const auto r = run_covey("frobnicate --x 1");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_EQ(r.err.rfind("covey: unknown command 'frobnicate'; commands: score, ", 0), 0u) << r.err;
  EXPECT_EQ(std::count(r.err.begin(), r.err.end(), '\n'), 1) << r.err;
  const json table = option_table();
  for (const auto& [command, options] : table.items())
    EXPECT_NE(r.err.find(command), std::string::npos) << command << " not listed: " << r.err;
}

struct Tables {
  TempDir dir;
  std::string scores = dir.file("scores.tsv");
  Tables() { write_scores_tsv(testing_util::random_full_table(5, 2, 1616), scores); }
};

TEST(Vocabulary, CountsTakeScientificNotation) {
  Tables t;
  auto r = run_covey("draw " + t.scores + " --cover 1 --draws 1.5e3 --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_EQ(json::parse(r.out)["count"], 1500);
  r = run_covey("exact " + t.scores + " --draws 2e2 -o " + t.dir.file("d.h5") + " --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_EQ(json::parse(r.out)["draws"]["count"], 200);
  r = run_covey("draw " + t.scores + " --cover 1 --draws 2.5");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("--draws: '2.5' is not a whole number"), std::string::npos) << r.err;
}

// Every command that writes refuses an existing output with one line naming the file and
// --force, leaves it as it was, and replaces it with --force.
TEST(Vocabulary, EveryWritingCommandRefusesAnExistingOutputWithoutForce) {
  Tables t;
  const std::string d = t.dir.path() + "/";
  ASSERT_EQ(run_covey("chain " + t.scores + " --chains 2 --steps 2000 --thin 10 -o " + d + "run.h5")
                .exit_code,
            0);
  write_file(d + "data.csv", "a,b,c\nx,y,x\ny,y,x\nx,x,y\ny,x,x\nx,y,y\n");
  struct Case {
    std::string command, output;
  };
  const std::vector<Case> cases = {
      {"score " + d + "data.csv -o " + d + "s.h5", d + "s.h5"},
      {"import-scores " + t.scores + " -o " + d + "i.h5", d + "i.h5"},
      {"export-scores " + t.scores + " -o " + d + "e.tsv", d + "e.tsv"},
      {"best " + t.scores + " --cover 1 --dot " + d + "b.dot", d + "b.dot"},
      {"draw " + t.scores + " --cover 1 --draws 50 -o " + d + "c.h5", d + "c.h5"},
      {"draw " + t.scores + " --cover 1 --draws 50 --save-sampler " + d + "sampler.h5",
       d + "sampler.h5"},
      {"exact " + t.scores + " --draws 50 -o " + d + "x.h5", d + "x.h5"},
      {"report " + d + "run.h5 -o " + d + "report", d + "report/index.html"},
      {"export " + d + "run.h5 --probabilities " + d + "p.csv", d + "p.csv"},
      {"chain " + t.scores + " --chains 2 --steps 1000 --thin 10 -o " + d + "run2.h5",
       d + "run2.h5"},
  };
  for (const Case& c : cases) {
    const auto first = run_covey(c.command);
    ASSERT_EQ(first.exit_code, 0) << c.command << "\n" << first.err;
    const std::string before = read_file(c.output);
    const auto again = run_covey(c.command);
    EXPECT_EQ(again.exit_code, 1) << c.command;
    EXPECT_NE(again.err.find(c.output + ": exists; --force replaces it"), std::string::npos)
        << c.command << "\n"
        << again.err;
    EXPECT_EQ(std::count(again.err.begin(), again.err.end(), '\n'), 1) << again.err;
    EXPECT_TRUE(read_file(c.output) == before) << c.command << " changed " << c.output;
    const auto forced = run_covey(c.command + " --force");
    EXPECT_EQ(forced.exit_code, 0) << c.command << " --force\n" << forced.err;
  }
}

// A chain run with teleports from D_k stores k (its options); compare reports the mass of D_k
// under the run without --cover, and --cover still chooses another class.
TEST(Vocabulary, CompareTakesTheCoverOfATeleportingRun) {
  Tables t;
  const std::string run = t.dir.file("tele.h5"), plain = t.dir.file("plain.h5");
  const std::string chain = "chain " + t.scores + " --chains 2 --steps 4000 --thin 10 --seed 5 ";
  ASSERT_EQ(run_covey(chain + "--teleport-cover 1 -o " + run).exit_code, 0);
  ASSERT_EQ(run_covey(chain + "-o " + plain).exit_code, 0);
  auto r = run_covey("compare " + run + " " + t.scores + " --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  json j = json::parse(r.out);
  ASSERT_FALSE(j["mass_in_cover_class"].is_null()) << r.out;
  EXPECT_EQ(j["mass_in_cover_class"]["k"], 1);
  EXPECT_EQ(j["mass_in_cover_class"]["side"], "a");
  r = run_covey("compare " + t.scores + " " + run + " --cover 2 --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_EQ(json::parse(r.out)["mass_in_cover_class"]["k"], 2);
  r = run_covey("compare " + plain + " " + t.scores + " --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_TRUE(json::parse(r.out)["mass_in_cover_class"].is_null()) << r.out;
  r = run_covey("compare " + run + " " + t.scores);
  EXPECT_NE(r.out.find("posterior mass of D_1 under a"), std::string::npos) << r.out;
}

}  // namespace
}  // namespace covey
