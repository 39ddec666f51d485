// report.html in a real browser: headless Chromium loads the page of a simulated fit,
// renders it to PNG and to PDF, and its DOM holds the verdict and the CM's numbers; the
// browser logs no console error. Skipped only when no chromium is installed
// (scripts/setup installs it).
#include <gtest/gtest.h>
#include <sys/wait.h>

#include <array>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <memory>
#include <string>

#include "support/report_folder.hpp"
#include "support/scenarios.hpp"
#include "support/temp_dir.hpp"
#include "tumbletrace/report/html_report.hpp"

namespace tumbletrace {
namespace {

namespace fs = std::filesystem;

std::string FindChromium() {
  for (const char* name : {"chromium", "chromium-browser", "google-chrome"}) {
    const std::string probe = std::string("command -v ") + name + " > /dev/null 2>&1";
    if (std::system(probe.c_str()) == 0) return name;
  }
  return "";
}

struct Output {
  int exit_code = -1;
  std::string out;
  std::string err;
};

// Runs chromium headless on `url` with `args`; stdout and stderr are captured.
Output RunChromium(const std::string& chromium, const fs::path& work, const std::string& args,
                   const std::string& url) {
  const fs::path err = work / "chromium_stderr.txt";
  const std::string command = chromium + " --headless --disable-gpu --no-sandbox --hide-scrollbars "
                              "--no-first-run --user-data-dir=" + (work / "profile").string() +
                              " --enable-logging=stderr --v=0 " + args + " '" + url + "' 2> '" +
                              err.string() + "'";
  Output result;
  std::unique_ptr<FILE, int (*)(FILE*)> pipe(popen(command.c_str(), "r"), pclose);
  std::array<char, 4096> buffer{};
  size_t n = 0;
  while ((n = fread(buffer.data(), 1, buffer.size(), pipe.get())) > 0) result.out.append(buffer.data(), n);
  const int status = pclose(pipe.release());
  result.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  std::ifstream in(err);
  result.err.assign(std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>());
  return result;
}

TEST(ReportInBrowser, ChromiumRendersThePageWithItsNumbersAndNoConsoleError) {
  const std::string chromium = FindChromium();
  if (chromium.empty()) GTEST_SKIP() << "chromium is not installed (scripts/setup installs it)";
  testing::TempDir dir("report_browser");
  const Scenario s = testing::PlanarSpinScenario(0.2, 41);
  testing::WriteResultsFolder(s, testing::SimulateAndFit(s, testing::DefaultFitOptions(s)), dir.path());
  WriteHtmlReport(dir.path());
  const ReportData data = ReadReportData(dir.path());
  const std::string url = "file://" + fs::absolute(dir.path() / "report.html").string();

  const Output dom = RunChromium(chromium, dir.path(), "--dump-dom", url);
  ASSERT_EQ(dom.exit_code, 0) << dom.err;
  EXPECT_NE(dom.out.find("id=\"verdict\""), std::string::npos);
  const nlohmann::json& r = data.results;
  const std::string cm_x =
      FormatWithSigma(r["cm"]["body_m"][0].get<double>(), r["cm"]["sigma_m"][0].get<double>(), 1e3);
  EXPECT_NE(dom.out.find(cm_x), std::string::npos) << cm_x;
  EXPECT_NE(dom.out.find("<svg"), std::string::npos);
  EXPECT_EQ(dom.err.find(":CONSOLE("), std::string::npos) << dom.err;

  const fs::path png = dir.path() / "report.png";
  const Output shot = RunChromium(chromium, dir.path(),
                                  "--window-size=1280,4000 --screenshot=" + png.string(), url);
  ASSERT_EQ(shot.exit_code, 0) << shot.err;
  ASSERT_TRUE(fs::exists(png));
  EXPECT_GT(fs::file_size(png), 50000u);  // a page of text and plots, not a blank one

  const fs::path pdf = dir.path() / "report.pdf";
  const Output print = RunChromium(chromium, dir.path(), "--no-pdf-header-footer --print-to-pdf=" + pdf.string(), url);
  ASSERT_EQ(print.exit_code, 0) << print.err;
  ASSERT_TRUE(fs::exists(pdf));
  EXPECT_GT(fs::file_size(pdf), 20000u);
  // Keep the renderings for a look when asked (TUMBLETRACE_KEEP_RENDERINGS=folder).
  if (const char* keep = std::getenv("TUMBLETRACE_KEEP_RENDERINGS")) {
    fs::create_directories(keep);
    for (const fs::path& f : {png, pdf, dir.path() / "report.html"}) {
      fs::copy_file(f, fs::path(keep) / f.filename(), fs::copy_options::overwrite_existing);
    }
  }
}

}  // namespace
}  // namespace tumbletrace
