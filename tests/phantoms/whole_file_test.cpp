// Output paths and whole-file writes: what frugal refuses to replace, and what a full disk leaves.
// A full disk is simulated without privileges by a file-size limit (POSIX setrlimit(2) with
// RLIMIT_FSIZE; SIGXFSZ ignored, so that write(2) fails with EFBIG instead of killing the test).

#include "phantoms/whole_file.h"

#include <gtest/gtest.h>
#include <sys/resource.h>
#include <sys/stat.h>

#include <csignal>
#include <filesystem>
#include <fstream>
#include <functional>
#include <string>

#include "phantoms/folder_manifest.h"
#include "phantoms/image.h"
#include "phantoms/nifti_io.h"
#include "phantoms/regular_file.h"
#include "phantoms/user_error.h"

namespace frugal {
namespace {

namespace fs = std::filesystem;

std::string fresh_folder(const std::string& name) {
  const std::string folder = ::testing::TempDir() + "/whole_file_test_" + name;
  fs::remove_all(folder);
  fs::create_directories(folder);
  return folder;
}

std::string message_of(const std::function<void()>& action) {
  try {
    action();
  } catch (const UserError& error) {
    return error.what();
  }
  return "";
}

bool has_partial(const std::string& folder) {
  for (const auto& entry : fs::recursive_directory_iterator(folder))
    if (entry.path().filename().string().find(".partial") != std::string::npos) return true;
  return false;
}

// Limits every file this process writes to `bytes` for its lifetime.
class FileSizeLimit {
 public:
  explicit FileSizeLimit(rlim_t bytes) {
    getrlimit(RLIMIT_FSIZE, &saved_);
    previous_ = std::signal(SIGXFSZ, SIG_IGN);
    rlimit limit = saved_;
    limit.rlim_cur = bytes;
    setrlimit(RLIMIT_FSIZE, &limit);
  }
  ~FileSizeLimit() {
    setrlimit(RLIMIT_FSIZE, &saved_);
    std::signal(SIGXFSZ, previous_);
  }
  FileSizeLimit(const FileSizeLimit&) = delete;
  FileSizeLimit& operator=(const FileSizeLimit&) = delete;

 private:
  rlimit saved_{};
  void (*previous_)(int) = nullptr;
};

// Expected wording: common practice, no source ("PATH: what is wrong; allowed: ...").
TEST(WritableOutput, RefusesWhatIsNotARegularFileOrAFolder) {
  const std::string folder = fresh_folder("refuses");
  const std::string pipe = folder + "/pipe";
  ASSERT_EQ(mkfifo(pipe.c_str(), 0600), 0);
  std::string message = message_of([&] { require_writable_output(pipe, OutputKind::file, "a file"); });
  EXPECT_NE(message.find("a named pipe"), std::string::npos) << message;
  EXPECT_NE(message.find("; allowed: a file"), std::string::npos) << message;
  message = message_of([&] { require_writable_output("/dev/full", OutputKind::folder, "a folder"); });
  EXPECT_NE(message.find("a character device"), std::string::npos) << message;
  message = message_of([&] { require_writable_output(folder, OutputKind::file, "a file"); });
  EXPECT_NE(message.find("is a folder"), std::string::npos) << message;
  // A pipe under the temporary name would block the open.
  ASSERT_EQ(mkfifo((folder + "/out.txt.partial").c_str(), 0600), 0);
  message = message_of([&] { require_writable_output(folder + "/out.txt", OutputKind::file, "a file"); });
  EXPECT_NE(message.find("out.txt.partial"), std::string::npos) << message;
  EXPECT_TRUE(fs::is_fifo(pipe));
}

TEST(WritableOutput, AcceptsAbsentAndRegularFilesAndFolders) {
  const std::string folder = fresh_folder("accepts");
  std::ofstream(folder + "/old.txt") << "old\n";
  EXPECT_NO_THROW(require_writable_output(folder + "/old.txt", OutputKind::file, "a file"));
  EXPECT_NO_THROW(require_writable_output(folder + "/new.txt", OutputKind::file, "a file"));
  EXPECT_NO_THROW(require_writable_output(folder, OutputKind::folder, "a folder"));
  EXPECT_NO_THROW(require_writable_output(folder + "/new", OutputKind::folder, "a folder"));
}

// Linux file systems take names of at most 255 bytes (NAME_MAX); frugal keeps room for ".partial".
TEST(WritableOutput, RefusesANameTooLongForTheFileSystem) {
  const std::string folder = fresh_folder("long");
  const std::string message =
      message_of([&] { require_writable_output(folder + "/" + std::string(300, 'n'), OutputKind::file, "a file"); });
  EXPECT_NE(message.find("300 characters long (name too long)"), std::string::npos) << message;
  EXPECT_NE(message.find("allowed: names of at most 239 characters"), std::string::npos) << message;
  EXPECT_NO_THROW(require_writable_output(folder + "/" + std::string(239, 'n'), OutputKind::file, "a file"));
}

TEST(WholeFile, AFullDiskIsAUserErrorAndLeavesNoTemporaryFile) {
  const std::string folder = fresh_folder("full");
  std::ofstream(folder + "/table.csv") << "old\n";
  {
    const FileSizeLimit limit(1000);
    WholeFile file(folder + "/table.csv");
    file.write(std::string(100000, 'x'));
    const std::string message = message_of([&] { file.commit(); });
    EXPECT_NE(message.find("table.csv: writing failed"), std::string::npos) << message;
  }
  EXPECT_FALSE(has_partial(folder));
  std::ifstream kept(folder + "/table.csv");
  std::string line;
  std::getline(kept, line);
  EXPECT_EQ(line, "old");  // nothing was replaced
}

TEST(WholeFile, AFullDiskFailsANiftiWriteAndLeavesNoTemporaryFile) {
  const std::string folder = fresh_folder("full_nifti");
  Geometry geometry;
  geometry.shape = {64, 64, 8};
  const FloatImage image(geometry, 1.5F);
  std::string message;
  {
    const FileSizeLimit limit(2000);
    message = message_of([&] { write_nifti(image, folder + "/image.nii"); });
  }
  EXPECT_NE(message.find("image.nii: writing the NIfTI file failed"), std::string::npos) << message;
  EXPECT_FALSE(fs::exists(folder + "/image.nii"));
  EXPECT_FALSE(has_partial(folder));
}

TEST(FolderManifest, RefusesAnUnfinishedOrForeignFolder) {
  const std::string folder = fresh_folder("manifest");
  std::string message = message_of([&] { read_folder_manifest(folder, "phantom_set", "a phantom set"); });
  EXPECT_NE(message.find("no manifest.json: the set is unfinished or not a phantom set"), std::string::npos) << message;
  std::ofstream(folder + "/manifest.json") << R"({"kind": "label_set", "schema_version": 1})";
  message = message_of([&] { read_folder_manifest(folder, "phantom_set", "a phantom set"); });
  EXPECT_NE(message.find("holds a finished label set, not a phantom set folder"), std::string::npos) << message;
  message = message_of([&] { require_output_folder(folder, "phantom_set", true); });
  EXPECT_NE(message.find("already holds a finished label set"), std::string::npos) << message;
  std::ofstream(folder + "/manifest.json") << R"({"kind": "phantom_set", "schema_version": 99})";
  message = message_of([&] { read_folder_manifest(folder, "phantom_set", "a phantom set"); });
  EXPECT_NE(message.find("schema_version is 99"), std::string::npos) << message;
  std::ofstream(folder + "/manifest.json") << R"({"kind": "phantom_)";
  message = message_of([&] { read_folder_manifest(folder, "phantom_set", "a phantom set"); });
  EXPECT_NE(message.find("not valid JSON"), std::string::npos) << message;
}

}  // namespace
}  // namespace frugal
