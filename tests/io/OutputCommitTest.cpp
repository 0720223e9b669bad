// Putting the outputs of a run in place together (io::OutputCommit), and
// the rule that an output never replaces an input (io::refuseOutputOverInput).
#include <gtest/gtest.h>

#include <sys/wait.h>
#include <unistd.h>

#include <csignal>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <mutex>
#include <stdexcept>
#include <string>
#include <thread>

#include "reachwise/Error.hpp"
#include "reachwise/io/OutputFiles.hpp"
#include "support/Scratch.hpp"

namespace fs = std::filesystem;
using namespace reachwise;

namespace {

void put(const fs::path& p, const std::string& text) { std::ofstream(p) << text; }

std::string text(const fs::path& p) {
  std::ifstream in(p);
  return std::string((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
}

/// Everything in `dir` whose name starts with a dot (temporary files,
/// journals, old outputs moved aside).
std::vector<std::string> hidden(const fs::path& dir) {
  std::vector<std::string> names;
  for (const auto& e : fs::directory_iterator(dir))
    if (e.path().filename().string()[0] == '.') names.push_back(e.path().filename().string());
  return names;
}

}  // namespace

TEST(OutputFiles, SamePathSeesLinksAndSpellings) {
  const testsupport::TempDir tmp;
  const fs::path a = tmp.path() / "a.gpkg";
  put(a, "x");
  fs::create_hard_link(a, tmp.path() / "hard.gpkg");
  fs::create_symlink(a, tmp.path() / "soft.gpkg");
  EXPECT_TRUE(io::samePath(a, tmp.path() / "hard.gpkg"));
  EXPECT_TRUE(io::samePath(a, tmp.path() / "soft.gpkg"));
  EXPECT_TRUE(io::samePath(a, tmp.path() / "sub" / ".." / "a.gpkg"));
  EXPECT_TRUE(io::samePath(tmp.path() / "new.nc", tmp.path() / "." / "new.nc"));  // neither exists
  EXPECT_FALSE(io::samePath(a, tmp.path() / "b.gpkg"));
}

TEST(OutputFiles, AnOutputOverAnInputIsRefusedNamingBoth) {
  const testsupport::TempDir tmp;
  const fs::path net = tmp.path() / "net.gpkg", inflow = tmp.path() / "csv" / "hydrographs.csv";
  fs::create_directories(inflow.parent_path());
  put(net, "n");
  put(inflow, "i");
  const std::vector<io::NamedPath> inputs = {{"NETWORK", net}, {"--inflow", inflow}};
  try {
    io::refuseOutputOverInput({{"--out", tmp.path() / "." / "net.gpkg"}}, inputs);
    FAIL() << "not refused";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("--out"), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find("NETWORK"), std::string::npos) << e.what();
  }
  // A CSV folder replaces the files it writes, not the others in it.
  EXPECT_THROW(io::refuseOutputOverInput({{"--csv", inflow.parent_path(), true, {"hydrographs.csv"}}}, inputs),
               InputError);
  EXPECT_NO_THROW(io::refuseOutputOverInput({{"--csv", inflow.parent_path(), true, {"reaches.csv"}}}, inputs));
  // A report folder is replaced whole: nothing read may lie inside it.
  EXPECT_THROW(io::refuseOutputOverInput({{"--report", tmp.path(), true, {}}}, inputs), InputError);
  // Two outputs on one file.
  EXPECT_THROW(io::refuseOutputOverInput({{"--out", tmp.path() / "r.x"}, {"--series", tmp.path() / "r.x"}}, {}),
               InputError);
  // A report folder replaced whole holds no other output.
  EXPECT_THROW(io::refuseOutputOverInput({{"--csv", tmp.path() / "o", true, {"reaches.csv"}},
                                          {"--report", tmp.path() / "o", true, {}}},
                                         {}),
               InputError);
  EXPECT_THROW(io::refuseOutputOverInput({{"--report", tmp.path() / "o", true, {}}, {"--out", tmp.path() / "o" / "r.gpkg"}},
                                         {}),
               InputError);
  EXPECT_NO_THROW(io::refuseOutputOverInput({{"--report", tmp.path() / "o" / "report", true, {}},
                                             {"--out", tmp.path() / "o" / "r.gpkg"},
                                             {"--csv", tmp.path() / "o", true, {"reaches.csv"}}},
                                            {}));
  EXPECT_NO_THROW(io::refuseOutputOverInput({{"--out", tmp.path() / "r.gpkg"}}, inputs));
}

// A failure at the last step (here the final action, as a write-back's
// transaction would fail) leaves every old output as it was and no
// temporary file.
TEST(OutputCommit, AFailureAtTheLastStepLeavesTheOldSet) {
  const testsupport::TempDir tmp;
  const fs::path a = tmp.path() / "a.csv", b = tmp.path() / "b.csv";
  put(a, "old a");
  put(b, "old b");
  {
    io::OutputCommit commit(true);
    put(io::partialPath(a), "new a");
    put(io::partialPath(b), "new b");
    commit.add(io::partialPath(a), a);
    commit.add(io::partialPath(b), b);
    commit.addFinal([] { throw std::runtime_error("the last step failed"); });
    EXPECT_THROW(commit.commit(), std::runtime_error);
  }
  EXPECT_EQ(text(a), "old a");
  EXPECT_EQ(text(b), "old b");
  EXPECT_TRUE(hidden(tmp.path()).empty());
  // And a commit that succeeds replaces both.
  io::OutputCommit commit(true);
  put(io::partialPath(a), "new a");
  put(io::partialPath(b), "new b");
  commit.add(io::partialPath(a), a);
  commit.add(io::partialPath(b), b);
  commit.commit();
  EXPECT_EQ(text(a), "new a");
  EXPECT_EQ(text(b), "new b");
  EXPECT_TRUE(hidden(tmp.path()).empty());
}

// Two runs racing for the same outputs. Without overwriting, exactly one
// wins and the other is refused; with it, both finish one after the other
// and the result is one run's set, never a mix.
TEST(OutputCommit, ConcurrentCommitsNeverMixOrSilentlyReplace) {
  const testsupport::TempDir tmp;
  const fs::path a = tmp.path() / "a.csv", b = tmp.path() / "b.csv";
  for (const bool overwrite : {false, true}) {
    for (int round = 0; round < 40; ++round) {
      std::error_code ec;
      fs::remove(a, ec);
      fs::remove(b, ec);
      int refused = 0;
      std::mutex m;
      const auto run = [&](const std::string& who) {
        const fs::path sa = tmp.path() / ("." + who + "a"), sb = tmp.path() / ("." + who + "b");
        put(sa, who);
        put(sb, who);
        io::OutputCommit commit(overwrite);
        commit.add(sa, a);
        commit.add(sb, b);
        try {
          commit.commit();
        } catch (const InputError& e) {
          const std::lock_guard lock(m);
          ++refused;
          EXPECT_NE(std::string(e.what()).find("another run"), std::string::npos) << e.what();
        }
      };
      std::thread one(run, "one"), two(run, "two");
      one.join();
      two.join();
      EXPECT_EQ(refused, overwrite ? 0 : 1);
      EXPECT_EQ(text(a), text(b)) << "a mix of two runs";
      EXPECT_TRUE(hidden(tmp.path()).empty());
    }
  }
}

// A run killed while putting its outputs in place leaves a journal; the
// next commit into that folder finishes the killed run's set first.
TEST(OutputCommit, TheNextCommitFinishesAKilledOne) {
  const testsupport::TempDir tmp;
  const fs::path a = tmp.path() / "a.csv", b = tmp.path() / "b.csv";
  put(a, "old a");
  put(b, "old b");
  const fs::path sa = io::partialPath(a), sb = io::partialPath(b);
  const pid_t child = ::fork();
  ASSERT_GE(child, 0);
  if (child == 0) {
    put(sa, "new a");
    put(sb, "new b");
    io::OutputCommit commit(true);
    commit.add(sa, a);
    commit.add(sb, b);
    commit.addFinal([] { ::raise(SIGKILL); });  // dies after the renames, before the clean-up
    commit.commit();
    ::_exit(0);
  }
  int status = 0;
  ::waitpid(child, &status, 0);
  ASSERT_TRUE(WIFSIGNALED(status));
  // Make it as if it had died between the two renames: b back to the old one.
  const fs::path staged_b = sb;  // where the journal expects it
  const fs::path old_b = tmp.path() / (".b.csv.partial-" + std::to_string(child) + ".old");
  ASSERT_TRUE(fs::exists(old_b));
  fs::rename(b, staged_b);
  fs::rename(old_b, b);
  EXPECT_EQ(text(a), "new a");  // a mix, for now
  EXPECT_EQ(text(b), "old b");

  const fs::path c = tmp.path() / "c.csv";
  put(io::partialPath(c), "c");
  io::OutputCommit next(false);
  next.add(io::partialPath(c), c);
  next.commit();
  EXPECT_EQ(text(a), "new a");
  EXPECT_EQ(text(b), "new b");
  ASSERT_EQ(next.recoveredNotes().size(), 1u);
  EXPECT_NE(next.recoveredNotes()[0].find("b.csv"), std::string::npos) << next.recoveredNotes()[0];
  EXPECT_TRUE(hidden(tmp.path()).empty());
}
