// Atomic output: the target holds the old content or the whole new content,
// never a part; temporary files do not outlive the writer except after SIGKILL.
#include <gtest/gtest.h>
#include <dirent.h>
#include <fcntl.h>
#include <signal.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "atomic_output.hpp"
#include "csv_writer.hpp"

using namespace ellipsa::cli;

namespace {

class AtomicOutputTest : public ::testing::Test {
 protected:
  void SetUp() override {
    const char* tmp = std::getenv("TMPDIR");
    std::string pattern = std::string(tmp ? tmp : "/tmp") + "/ellipsa-atomic-XXXXXX";
    ASSERT_NE(::mkdtemp(pattern.data()), nullptr);
    dir_ = pattern;
    target_ = dir_ + "/scores.csv";
  }
  void TearDown() override {
    for (const std::string& name : entries()) ::unlink((dir_ + "/" + name).c_str());
    ::rmdir(dir_.c_str());
  }
  std::vector<std::string> entries() const {
    std::vector<std::string> names;
    if (DIR* d = ::opendir(dir_.c_str())) {
      while (const dirent* e = ::readdir(d))
        if (std::string(e->d_name) != "." && std::string(e->d_name) != "..") names.push_back(e->d_name);
      ::closedir(d);
    }
    return names;
  }
  std::vector<std::string> temp_files() const {
    std::vector<std::string> found;
    for (const std::string& name : entries())
      if (name.rfind(".scores.csv.tmp-", 0) == 0) found.push_back(name);
    return found;
  }
  static std::string slurp(const std::string& path) {
    std::ifstream in(path, std::ios::binary);
    std::stringstream s;
    s << in.rdbuf();
    return s.str();
  }
  static void put(const std::string& path, const std::string& text) { std::ofstream(path, std::ios::binary) << text; }

  // A child writes a large output and stops before commit; the parent kills it.
  int kill_writer_midway(int signal_number) {
    int ready[2];
    EXPECT_EQ(::pipe(ready), 0);
    const pid_t child = ::fork();
    if (child == 0) {
      ::close(ready[0]);
      AtomicOutput out(target_);
      const std::string block(1 << 16, 'n');
      for (int i = 0; i < 64; ++i) std::fwrite(block.data(), 1, block.size(), out.stream());
      std::fflush(out.stream());
      (void)::write(ready[1], "w", 1);
      for (;;) ::pause();
    }
    ::close(ready[1]);
    char byte = 0;
    EXPECT_EQ(::read(ready[0], &byte, 1), 1);
    ::close(ready[0]);
    EXPECT_EQ(temp_files().size(), 1u);  // the half-written output exists now
    ::kill(child, signal_number);
    int status = 0;
    ::waitpid(child, &status, 0);
    return status;
  }

  std::string dir_, target_;
};

}  // namespace

TEST_F(AtomicOutputTest, CommitReplacesTheTarget) {
  put(target_, "old\n");
  {
    AtomicOutput out(target_);
    EXPECT_EQ(out.temp_path().rfind(dir_ + "/.scores.csv.tmp-", 0), 0u) << out.temp_path();
    CsvWriter writer(out.stream());
    writer.text("new").end_row();
    writer.flush();
    EXPECT_EQ(slurp(target_), "old\n");  // nothing visible before commit
    out.commit();
    EXPECT_TRUE(out.committed());
  }
  EXPECT_EQ(slurp(target_), "new\n");
  EXPECT_TRUE(temp_files().empty());
}

TEST_F(AtomicOutputTest, NoCommitKeepsTheOldContent) {
  put(target_, "old\n");
  try {
    AtomicOutput out(target_);
    std::fputs("partial", out.stream());
    throw std::runtime_error("failure in the middle");
  } catch (const std::runtime_error&) {
  }
  EXPECT_EQ(slurp(target_), "old\n");
  EXPECT_TRUE(temp_files().empty());

  const std::string fresh = dir_ + "/fresh.csv";
  {
    AtomicOutput out(fresh);
    std::fputs("x", out.stream());
    out.discard();
    EXPECT_THROW(out.commit(), OutputError);
  }
  EXPECT_NE(::access(fresh.c_str(), F_OK), 0);
  EXPECT_EQ(entries(), (std::vector<std::string>{"scores.csv"}));
}

TEST_F(AtomicOutputTest, KeepsPermissionsAndFollowsSymlink) {
  put(target_, "old\n");
  ASSERT_EQ(::chmod(target_.c_str(), 0640), 0);
  const std::string link = dir_ + "/link.csv";
  ASSERT_EQ(::symlink(target_.c_str(), link.c_str()), 0);
  {
    AtomicOutput out(link);
    std::fputs("via link\n", out.stream());
    out.commit();
  }
  struct stat st {};
  ASSERT_EQ(::lstat(link.c_str(), &st), 0);
  EXPECT_TRUE(S_ISLNK(st.st_mode));
  ASSERT_EQ(::stat(target_.c_str(), &st), 0);
  EXPECT_EQ(st.st_mode & 0777, 0640u);
  EXPECT_EQ(slurp(target_), "via link\n");
}

TEST_F(AtomicOutputTest, BadTargetsAreOutputErrors) {
  EXPECT_THROW(AtomicOutput{dir_}, OutputError);                       // a folder
  EXPECT_THROW(AtomicOutput{dir_ + "/missing/out.csv"}, OutputError);  // no such folder
  EXPECT_THROW(AtomicOutput{""}, OutputError);
  try {
    AtomicOutput out(dir_ + "/missing/out.csv");
  } catch (const OutputError& e) {
    EXPECT_EQ(std::string(e.what()),
              "cannot create a temporary file for '" + dir_ + "/missing/out.csv': No such file or directory");
  }
}

TEST_F(AtomicOutputTest, DashWritesToStdout) {
  const std::string captured = dir_ + "/stdout.txt";
  std::fflush(stdout);
  const int saved = ::dup(STDOUT_FILENO);
  const int fd = ::open(captured.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
  ::dup2(fd, STDOUT_FILENO);
  ::close(fd);
  {
    AtomicOutput out("-");
    EXPECT_TRUE(out.to_stdout());
    EXPECT_EQ(out.stream(), stdout);
    std::fputs("to stdout\n", out.stream());
    out.commit();
  }
  ::dup2(saved, STDOUT_FILENO);
  ::close(saved);
  EXPECT_EQ(slurp(captured), "to stdout\n");
}

TEST_F(AtomicOutputTest, SigkillMidWriteLeavesTheTargetIntact) {
  put(target_, "old\n");
  const int status = kill_writer_midway(SIGKILL);
  ASSERT_TRUE(WIFSIGNALED(status));
  EXPECT_EQ(WTERMSIG(status), SIGKILL);
  EXPECT_EQ(slurp(target_), "old\n");
  // SIGKILL cannot be caught: the temporary file stays, under the documented name.
  EXPECT_EQ(temp_files().size(), 1u);
}

TEST_F(AtomicOutputTest, SigtermMidWriteRemovesTheTemporaryFile) {
  put(target_, "old\n");
  const int status = kill_writer_midway(SIGTERM);
  ASSERT_TRUE(WIFSIGNALED(status));
  EXPECT_EQ(WTERMSIG(status), SIGTERM);  // the signal still ends the process
  EXPECT_EQ(slurp(target_), "old\n");
  EXPECT_TRUE(temp_files().empty());
}

TEST_F(AtomicOutputTest, ExitWithoutCommitRemovesTheTemporaryFile) {
  put(target_, "old\n");
  const pid_t child = ::fork();
  if (child == 0) {
    AtomicOutput out(target_);
    std::fputs("partial", out.stream());
    std::exit(9);  // no destructors run; the atexit hook cleans up
  }
  int status = 0;
  ::waitpid(child, &status, 0);
  ASSERT_TRUE(WIFEXITED(status));
  EXPECT_EQ(WEXITSTATUS(status), 9);
  EXPECT_EQ(slurp(target_), "old\n");
  EXPECT_TRUE(temp_files().empty());
}
