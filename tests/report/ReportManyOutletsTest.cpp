// The run report of a network with many outlets, end to end: `reachwise
// synth` makes 84 basins (with lakes), `reachwise route --report` routes
// them, and the page is read back with libxml2's HTML parser (XPath over
// the document tree) and checked against the GeoPackage the same run wrote
// (read with GDAL/OGR): every figure has a title and its units and shows a
// file of the folder, the outlet panels form one grid ranked by peak, the
// outlet table lists every outlet of the nodes layer with its peak, and
// the map fills the page's width or has the outlet table beside it.
#include <gdal_priv.h>
#include <gtest/gtest.h>
#include <unistd.h>
#include <libxml/HTMLparser.h>
#include <libxml/parser.h>
#include <libxml/tree.h>
#include <libxml/xpath.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <memory>
#include <set>
#include <string>
#include <vector>

#include "support/Cli.hpp"
#include "support/Scratch.hpp"
#include "reachwise/io/Gdal.hpp"

namespace {

namespace fs = std::filesystem;

constexpr int kOutlets = 84;
constexpr std::size_t kPanels = 12;  // the report's cap on outlet panels (docs/report.md)

/// A parsed HTML page and XPath queries on it (libxml2).
class HtmlPage {
public:
  explicit HtmlPage(const fs::path& file)
      : doc_(htmlReadFile(file.c_str(), "utf-8", HTML_PARSE_NOERROR | HTML_PARSE_NOWARNING | HTML_PARSE_NONET)) {
    if (doc_) ctx_ = xmlXPathNewContext(doc_);
  }
  ~HtmlPage() {
    if (ctx_) xmlXPathFreeContext(ctx_);
    if (doc_) xmlFreeDoc(doc_);
  }
  HtmlPage(const HtmlPage&) = delete;
  HtmlPage& operator=(const HtmlPage&) = delete;
  bool ok() const { return doc_ && ctx_; }

  /// The nodes `xpath` selects, relative to `at` (the document when null).
  std::vector<xmlNodePtr> nodes(const std::string& xpath, xmlNodePtr at = nullptr) const {
    ctx_->node = at ? at : xmlDocGetRootElement(doc_);
    xmlXPathObjectPtr r = xmlXPathEvalExpression(reinterpret_cast<const xmlChar*>(xpath.c_str()), ctx_);
    std::vector<xmlNodePtr> out;
    if (r && r->nodesetval)
      for (int i = 0; i < r->nodesetval->nodeNr; ++i) out.push_back(r->nodesetval->nodeTab[i]);
    xmlXPathFreeObject(r);
    return out;
  }

  static std::string text(xmlNodePtr n) {
    xmlChar* c = xmlNodeGetContent(n);
    std::string s = c ? reinterpret_cast<const char*>(c) : "";
    xmlFree(c);
    return s;
  }
  static std::string attr(xmlNodePtr n, const char* name) {
    xmlChar* c = xmlGetProp(n, reinterpret_cast<const xmlChar*>(name));
    std::string s = c ? reinterpret_cast<const char*>(c) : "";
    xmlFree(c);
    return s;
  }

private:
  htmlDocPtr doc_ = nullptr;
  xmlXPathContextPtr ctx_ = nullptr;
};

std::string trim(std::string s) {
  const auto a = s.find_first_not_of(" \t\n"), b = s.find_last_not_of(" \t\n");
  return a == std::string::npos ? std::string() : s.substr(a, b - a + 1);
}

/// The network and its routed report, made once per test process (ctest
/// runs each test in a process of its own).
struct Runs {
  fs::path dir;
  std::string error;  ///< empty when every command succeeded

  Runs() : dir(fs::temp_directory_path() / ("reachwise_ReportManyOutletsTest_" + std::to_string(::getpid()))) {
    fs::remove_all(dir);
    fs::create_directories(dir);
    const std::string net = (dir / "net.gpkg").string(), lat = (dir / "lat.nc").string();
    const auto synth = testsupport::runReachwise("synth " + net + " --reaches 7200 --outlets " +
                                                 std::to_string(kOutlets) +
                                                 " --lakes 3 --steps 48 --start 2024-06-01T05:30:00Z --quiet "
                                                 "--lateral " + lat);
    if (synth.code != 0) {
      error = "synth: " + synth.err;
      return;
    }
    const auto si = testsupport::runReachwise("route " + net + " --lateral " + lat + " --lakes " + net + " --out " +
                                              (dir / "out.gpkg").string() + " --report " +
                                              (dir / "report").string() + " --quiet");
    if (si.code != 0) error = "route: " + si.err;
  }
  /// The same network routed with US customary units (only the test of
  /// those units asks for it).
  std::string routeUs() const {
    {
      std::ofstream us(dir / "us.toml");
      us << "[network]\nunits = \"us\"\n";
    }
    const auto us = testsupport::runReachwise("route " + (dir / "net.gpkg").string() + " --lateral " +
                                              (dir / "lat.nc").string() + " --config " + (dir / "us.toml").string() +
                                              " --out " + (dir / "us.gpkg").string() + " --report " +
                                              (dir / "us-report").string() + " --quiet");
    return us.code == 0 ? std::string() : "route (US customary units): " + us.err;
  }
  ~Runs() {
    std::error_code ec;
    fs::remove_all(dir, ec);
  }
};

class ReportManyOutletsTest : public ::testing::Test {
protected:
  static const Runs& runs() {
    static const Runs r;
    return r;
  }
  void SetUp() override {
    ASSERT_TRUE(runs().error.empty()) << runs().error;
    dir_ = runs().dir;
  }
  fs::path path(const std::string& name) const { return dir_ / name; }

  /// Outlet node id -> peak_q of the `nodes` layer, read with OGR.
  static std::map<std::string, double> outletPeaks(const fs::path& gpkg) {
    reachwise::io::ensureGdal();
    std::map<std::string, double> out;
    GDALDatasetUniquePtr ds(GDALDataset::Open(gpkg.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
    if (!ds) return out;
    for (auto& f : *ds->GetLayerByName("nodes"))
      if (std::string(f->GetFieldAsString("kind")) == "outlet")
        out[f->GetFieldAsString("node_id")] = f->GetFieldAsDouble("peak_q");
    return out;
  }

  fs::path dir_;
};

/// Every figure: one image of a file in the folder (an SVG parses as XML
/// with an <svg> root), a caption with a bold title, the discharge unit,
/// and for every figure against time the time zone.
void checkFigures(const HtmlPage& page, const fs::path& report, const std::string& q_unit,
                  const std::string& other_unit) {
  const auto figures = page.nodes("//figure");
  ASSERT_GT(figures.size(), kPanels);
  for (xmlNodePtr f : figures) {
    const auto imgs = page.nodes("img", f);
    ASSERT_EQ(imgs.size(), 1u);
    const std::string src = HtmlPage::attr(imgs[0], "src");
    SCOPED_TRACE(src);
    ASSERT_TRUE(fs::is_regular_file(report / src));
    EXPECT_FALSE(HtmlPage::attr(imgs[0], "alt").empty());
    if (fs::path(src).extension() == ".svg") {
      xmlDocPtr svg = xmlReadFile((report / src).c_str(), nullptr, XML_PARSE_NONET | XML_PARSE_HUGE);
      ASSERT_NE(svg, nullptr);
      EXPECT_STREQ(reinterpret_cast<const char*>(xmlDocGetRootElement(svg)->name), "svg");
      xmlFreeDoc(svg);
    }
    const auto caption = page.nodes("figcaption", f);
    ASSERT_EQ(caption.size(), 1u);
    const auto title = page.nodes("figcaption/b", f);
    ASSERT_EQ(title.size(), 1u);
    EXPECT_GE(trim(HtmlPage::text(title[0])).size(), 4u);
    const std::string text = HtmlPage::text(caption[0]);
    EXPECT_NE(text.find(q_unit), std::string::npos) << text;
    EXPECT_EQ(text.find(other_unit), std::string::npos) << text;
    if (src.rfind("map.", 0) != 0) {
      EXPECT_NE(text.find("UTC"), std::string::npos) << text;
    }
  }
}

TEST_F(ReportManyOutletsTest, EveryFigureHasATitleItsUnitsAndAFileOfTheFolder) {
  const HtmlPage page(path("report") / "index.html");
  ASSERT_TRUE(page.ok());
  checkFigures(page, path("report"), "m³/s", "cfs");
}

TEST_F(ReportManyOutletsTest, UsCustomaryUnitsLabelEveryFigureAndTheOutletTable) {
  const std::string error = runs().routeUs();
  ASSERT_TRUE(error.empty()) << error;
  const HtmlPage page(path("us-report") / "index.html");
  ASSERT_TRUE(page.ok());
  checkFigures(page, path("us-report"), "cfs", "m³/s");
  const auto head = page.nodes("//table[@id='outlets']/thead/tr/th");
  ASSERT_GE(head.size(), 3u);
  EXPECT_EQ(trim(HtmlPage::text(head[2])), "peak (cfs)");
  // The GeoPackage of a US-customary network is in its units too (route's
  // output units follow the input's): the table's top row shows the
  // nodes layer's peak in cfs.
  const auto peaks = outletPeaks(path("us.gpkg"));
  const auto top = page.nodes("//table[@id='outlets']/tbody/tr[1]/td");
  ASSERT_GE(top.size(), 3u);
  const double cfs = peaks.at("O:" + trim(HtmlPage::text(top[1])));
  EXPECT_NEAR(std::stod(HtmlPage::text(top[2])), cfs, 0.006);  // printed with 2 decimals
}

TEST_F(ReportManyOutletsTest, OutletTableListsEveryOutletOfTheNodesLayerLargestPeakFirst) {
  const HtmlPage page(path("report") / "index.html");
  ASSERT_TRUE(page.ok());
  const auto peaks = outletPeaks(path("out.gpkg"));
  ASSERT_EQ(peaks.size(), static_cast<std::size_t>(kOutlets));
  const auto tables = page.nodes("//table[@id='outlets']");
  ASSERT_EQ(tables.size(), 1u);  // one list, not repeated
  const auto rows = page.nodes("//table[@id='outlets']/tbody/tr");
  ASSERT_EQ(rows.size(), peaks.size());
  std::set<std::string> seen;
  double last = INFINITY;
  std::size_t labelled = 0;
  for (std::size_t k = 0; k < rows.size(); ++k) {
    const auto cells = page.nodes("td", rows[k]);
    ASSERT_EQ(cells.size(), 6u);
    EXPECT_EQ(trim(HtmlPage::text(cells[0])), std::to_string(k + 1));
    const std::string id = "O:" + trim(HtmlPage::text(cells[1]));
    ASSERT_TRUE(peaks.count(id)) << id;
    EXPECT_TRUE(seen.insert(id).second) << id << " listed twice";
    const double peak = std::stod(HtmlPage::text(cells[2]));
    EXPECT_NEAR(peak, peaks.at(id), 0.0051) << id;  // printed with 2 decimals
    EXPECT_LE(peak, last + 1e-9) << "row " << k + 1 << " is not ranked by peak";
    last = peak;
    const std::string on_map = trim(HtmlPage::text(cells[5]));
    EXPECT_TRUE(on_map == "labelled" || on_map == "symbol only") << on_map;
    labelled += on_map == "labelled";
  }
  // Labels that found no place are still listed (here: symbol only).
  EXPECT_GT(labelled, 0u);
}

TEST_F(ReportManyOutletsTest, OutletPanelsFormOneGridRankedByPeakAndMatchTheTable) {
  const HtmlPage page(path("report") / "index.html");
  ASSERT_TRUE(page.ok());
  const auto grids = page.nodes("//div[@id='outlet-panels']");
  ASSERT_EQ(grids.size(), 1u);
  EXPECT_EQ(HtmlPage::attr(grids[0], "class"), "grid");
  const auto panels = page.nodes("figure", grids[0]);
  ASSERT_EQ(panels.size(), kPanels);
  // The section says how the panels are ranked.
  const auto intro = page.nodes("//div[@id='outlet-panels']/preceding-sibling::p[1]");
  ASSERT_EQ(intro.size(), 1u);
  EXPECT_NE(HtmlPage::text(intro[0]).find("ranked by peak discharge, largest first"), std::string::npos);
  // Panel k is the table's row whose panel column says k; the panels'
  // peaks (from the table) fall from the first to the last.
  std::map<std::size_t, std::pair<std::string, double>> by_panel;
  for (xmlNodePtr row : page.nodes("//table[@id='outlets']/tbody/tr")) {
    const auto cells = page.nodes("td", row);
    const std::string panel = trim(HtmlPage::text(cells[4]));
    if (panel == "-") continue;
    by_panel[std::stoul(panel)] = {trim(HtmlPage::text(cells[1])), std::stod(HtmlPage::text(cells[2]))};
  }
  ASSERT_EQ(by_panel.size(), kPanels);
  double last = INFINITY;
  for (std::size_t k = 0; k < kPanels; ++k) {
    EXPECT_EQ(HtmlPage::attr(panels[k], "id"), "outlet-panel-" + std::to_string(k + 1));
    ASSERT_TRUE(by_panel.count(k + 1)) << k + 1;
    const auto title = page.nodes("figcaption/b", panels[k]);
    ASSERT_EQ(title.size(), 1u);
    EXPECT_EQ(trim(HtmlPage::text(title[0])), "Outlet O:" + by_panel[k + 1].first);
    EXPECT_EQ(HtmlPage::attr(page.nodes("img", panels[k])[0], "src"), "outlet-" + std::to_string(k + 1) + ".svg");
    EXPECT_LE(by_panel[k + 1].second, last);
    last = by_panel[k + 1].second;
  }
}

TEST_F(ReportManyOutletsTest, MapFillsThePageWidthOrHasTheOutletTableBesideIt) {
  const HtmlPage page(path("report") / "index.html");
  ASSERT_TRUE(page.ok());
  const auto map = page.nodes("//figure[img[starts-with(@src,'map.')]]");
  ASSERT_EQ(map.size(), 1u);
  const bool wide = HtmlPage::attr(map[0], "style").find("width:100%") != std::string::npos;
  const bool table_beside =
      !page.nodes("//figure[img[starts-with(@src,'map.')]]/following-sibling::div[@class='side']//table[@id='outlets']")
           .empty();
  EXPECT_TRUE(wide || table_beside) << HtmlPage::attr(map[0], "style");
  // The map's legend names the lakes; the caption says where each label is.
  EXPECT_NE(HtmlPage::text(page.nodes("figcaption", map[0])[0]).find("lakes and reservoirs"), std::string::npos);
}

}  // namespace
