#include "tumbletrace/report/html_report.hpp"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <fstream>
#include <map>
#include <numeric>
#include <set>
#include <sstream>

#include "tumbletrace/core/atomic_file.hpp"
#include "tumbletrace/core/error.hpp"
#include "tumbletrace/report/svg_plot.hpp"

namespace tumbletrace {
namespace {

using nlohmann::json;

// ---- reading results.json -------------------------------------------------------------

// The value at a dotted key ("cm.sigma_m"), or nullptr when a key on the way is missing or
// the value is null.
const json* Find(const json& j, const std::string& dotted) {
  const json* node = &j;
  std::istringstream keys(dotted);
  std::string key;
  while (std::getline(keys, key, '.')) {
    if (!node->is_object() || !node->contains(key)) return nullptr;
    node = &(*node)[key];
  }
  return node->is_null() ? nullptr : node;
}

std::optional<double> Number(const json& j, const std::string& dotted) {
  const json* v = Find(j, dotted);
  return v && v->is_number() ? std::optional<double>(v->get<double>()) : std::nullopt;
}

std::optional<double> Element(const json* array, size_t i) {
  if (!array || !array->is_array() || i >= array->size() || !(*array)[i].is_number()) return std::nullopt;
  return (*array)[i].get<double>();
}

std::string Text(const json& j, const std::string& dotted) {
  const json* v = Find(j, dotted);
  return v && v->is_string() ? v->get<std::string>() : std::string();
}

bool Flag(const json& j, const std::string& dotted) {
  const json* v = Find(j, dotted);
  return v && v->is_boolean() && v->get<bool>();
}

std::optional<Eigen::Vector3d> Vector3(const json& j, const std::string& dotted) {
  const json* v = Find(j, dotted);
  Eigen::Vector3d out;
  for (int i = 0; i < 3; ++i) {
    const std::optional<double> e = Element(v, i);
    if (!e) return std::nullopt;
    out[i] = *e;
  }
  return out;
}

// A world position whose undetermined components (null in results.json, empty in
// frames.csv) are taken as 0, the same for every point: differences then leave out the
// direction the throw does not determine (a projection onto the plane it does).
Eigen::Vector3d Determined(const Eigen::Vector3d& p) {
  return p.unaryExpr([](double v) { return std::isfinite(v) ? v : 0.0; });
}

std::optional<Eigen::Vector3d> PositionOrNull(const json& j, const std::string& dotted) {
  const json* v = Find(j, dotted);
  if (!v || !v->is_array() || v->size() != 3) return std::nullopt;
  Eigen::Vector3d out;
  for (int i = 0; i < 3; ++i) out[i] = Element(v, i).value_or(std::nan(""));
  return out;
}

std::string H(const std::string& text) { return EscapeXml(text); }

// ---- numbers --------------------------------------------------------------------------

int DecimalsForSigma(double sigma) {
  if (!(sigma > 0) || !std::isfinite(sigma)) return 3;
  return std::clamp(1 - static_cast<int>(std::floor(std::log10(sigma))), 0, 9);
}

// A value without a sigma: about four significant digits.
std::string Plain(double value, int significant = 4) {
  if (value == 0.0 || !std::isfinite(value)) return fmt::format("{}", value);
  const int magnitude = static_cast<int>(std::floor(std::log10(std::abs(value))));
  return fmt::format("{:.{}f}", value, std::clamp(significant - 1 - magnitude, 0, 9));
}

constexpr const char* kNotDetermined = "<span class=\"nd\">not determined</span>";

std::string NotDetermined(const std::string& reason) {
  return std::string(kNotDetermined) + (reason.empty() ? "" : " — " + H(reason));
}

// ---- time axis --------------------------------------------------------------------------

// Frame -> ms at the capture rate (the first camera's clock).
struct TimeAxis {
  double fps = 0.0;
  double Ms(double frame) const { return fps > 0 ? 1e3 * frame / fps : frame; }
  std::string Label() const { return fps > 0 ? "time, ms (frame / capture rate)" : "frame"; }
  // frames.csv's frames on this axis.
  std::vector<double> Of(const CsvTable& frames) const {
    std::vector<double> t;
    for (double f : frames.Values("frame")) t.push_back(Ms(f));
    return t;
  }
};

// The window as a band and the flags as marks on a time axis.
void MarkWindowAndFlags(SvgPlot* plot, const ReportData& data, const TimeAxis& time, bool with_window) {
  const json& r = data.results;
  const std::optional<double> first = Number(r, "window.first_frame"), last = Number(r, "window.last_frame");
  if (with_window && first && last) {
    plot->AddBand(time.Ms(*first), time.Ms(*last), "#2e8b57", "free-flight window (fitted frames)");
  }
  const json* flags = Find(r, "diagnostics.flags");
  if (!flags || !flags->is_array()) return;
  std::set<std::string> labelled;
  for (const json& f : *flags) {
    const std::string kind = f.value("kind", std::string("flag"));
    for (const char* end : {"first_frame", "last_frame"}) {
      if (f.contains(end) && f[end].is_number()) {
        const bool first_label = labelled.insert(kind).second;
        plot->AddVerticalLine(time.Ms(f[end].get<double>()), "#c0392b",
                              first_label ? "flag: " + kind : std::string());
        if (std::string(end) == "first_frame" && f.contains("last_frame") && f["last_frame"] == f["first_frame"]) break;
      }
    }
  }
}

// ---- the verdict -------------------------------------------------------------------------

double Median(std::vector<double> v) {
  v.erase(std::remove_if(v.begin(), v.end(), [](double x) { return !std::isfinite(x); }), v.end());
  if (v.empty()) return std::nan("");
  std::nth_element(v.begin(), v.begin() + v.size() / 2, v.end());
  return v[v.size() / 2];
}

// Flags that say the body left the model's motion within the fitted frames. A 'marker'
// flag (one marker off the motion while the others fit: partly hidden, shadowed, merged)
// is not one: its sightings are set aside and the numbers come from the rest.
bool IsBreakFlag(const std::string& kind) {
  return kind == "release" || kind == "contact" || kind == "impact" || kind == "frames";
}

// The share of the sightings set aside one marker at a time: in frames where most of the
// markers still fit (residuals.csv's `outlier` column), as against frames the body itself
// left the motion in, which the 'frames' flag reports.
double SetAsideOneMarkerAtATime(const CsvTable& residuals) {
  const std::vector<double> frames = residuals.Values("frame");
  const std::vector<double> outlier = residuals.Values("outlier");
  std::map<double, std::pair<int, int>> of_frame;  // frame -> (set aside, sightings)
  for (size_t i = 0; i < frames.size() && i < outlier.size(); ++i) {
    of_frame[frames[i]].first += outlier[i] > 0.5;
    ++of_frame[frames[i]].second;
  }
  int set_aside = 0;
  for (const auto& [frame, counts] : of_frame) {
    if (2 * counts.first <= counts.second) set_aside += counts.first;
  }
  return frames.empty() ? 0.0 : static_cast<double>(set_aside) / frames.size();
}

// ---- plots ---------------------------------------------------------------------------------

// The finite extent of some values.
struct Range {
  double lo = std::numeric_limits<double>::infinity();
  double hi = -std::numeric_limits<double>::infinity();
  void Add(double v) {
    if (std::isfinite(v)) {
      lo = std::min(lo, v);
      hi = std::max(hi, v);
    }
  }
};

const char* kPalette[] = {"#1f5fa8", "#d9730d", "#2e8b57", "#8e44ad", "#b03060", "#5d6d7e",
                          "#a67c00", "#17a2b8", "#6b8e23", "#c0392b"};

// Three lines from frames.csv columns named by `column` with x, y, z in place of {}.
void AddWorldComponents(SvgPlot* plot, const CsvTable& frames, const std::vector<double>& t,
                        const std::string& column, const std::string& label) {
  const char* names[] = {"x", "y", "z"};
  for (int i = 0; i < 3; ++i) {
    plot->Add({fmt::format(fmt::runtime(label), names[i]), t, frames.Values(fmt::format(fmt::runtime(column), names[i])),
               kPalette[i], SeriesStyle::kLine, 1.5});
  }
}

std::string Figure(const std::string& svg, const std::string& caption) {
  return "<figure>" + svg + "<figcaption>" + caption + "</figcaption></figure>\n";
}

// The marker layout seen from +z of the body frame, with the design and measured CM and the
// measured CM's 1-sigma and 95 % ellipses in the x-y plane.
std::string BodyDrawing(const ReportData& data) {
  const json& r = data.results;
  const json* markers = Find(r, "body.markers");
  if (!markers || !markers->is_array() || markers->empty()) {
    return "<p>" + NotDetermined("results.json has no body.markers (written by an older version)") + "</p>";
  }
  SvgPlot plot("body x, mm", "body y, mm", 600, 340);
  plot.SetId("body");
  plot.SetEqualAspect();
  PlotSeries dots{"markers (id)", {}, {}, "#444", SeriesStyle::kDots, 4.0};
  PlotSeries points{"reference points", {}, {}, "#8e44ad", SeriesStyle::kCrosses, 4.0};
  std::vector<std::pair<std::string, Eigen::Vector2d>> names;
  for (const json& m : *markers) {
    const json* at = m.contains("at_m") ? &m["at_m"] : nullptr;
    const std::optional<double> x = Element(at, 0), y = Element(at, 1);
    if (!x || !y) continue;
    dots.x.push_back(1e3 * *x);
    dots.y.push_back(1e3 * *y);
    plot.AddText(1e3 * *x, 1e3 * *y, fmt::format("{}", m.value("id", 0)), "#444");
  }
  if (const json* refs = Find(r, "body.references_m"); refs && refs->is_object()) {
    for (const auto& [name, at] : refs->items()) {
      const std::optional<double> x = Element(&at, 0), y = Element(&at, 1);
      if (!x || !y) continue;
      points.x.push_back(1e3 * *x);
      points.y.push_back(1e3 * *y);
      names.emplace_back(name, Eigen::Vector2d(1e3 * *x, 1e3 * *y));
    }
  }
  // Room for the labels: the reference names go below their points, and the range reaches
  // past the right-most point.
  Range xr;
  for (double x : dots.x) xr.Add(x);
  for (double x : points.x) xr.Add(x);
  const double span = std::max(xr.hi - xr.lo, 10.0);
  plot.SetXRange(xr.lo - 0.06 * span, xr.hi + 0.16 * span);
  for (const auto& [name, at] : names) plot.AddText(at.x(), at.y() - 0.07 * span, name, "#8e44ad");
  plot.Add(dots);
  plot.Add(points);

  // The CM's marks, drawn on the layout and again on a zoom about the measured CM.
  std::vector<PlotSeries> cm_marks;
  std::optional<Eigen::Vector2d> design;
  if (const std::optional<Eigen::Vector3d> d = Vector3(r, "cm.design_body_m")) {
    design = 1e3 * d->head<2>();
    cm_marks.push_back({"design CM (parts list)", {design->x()}, {design->y()}, "#d9730d", SeriesStyle::kCrosses, 6.0});
  }
  const json* cm = Find(r, "cm.body_m");
  const std::optional<double> cx = Element(cm, 0), cy = Element(cm, 1);
  const json* cov = Find(r, "cm.covariance_m2");
  std::string note;
  double zoom_half_mm = 0.0;
  if (cx && cy) {
    const std::optional<double> sxx = cov ? Element(&(*cov)[0], 0) : std::nullopt;
    const std::optional<double> sxy = cov ? Element(&(*cov)[0], 1) : std::nullopt;
    const std::optional<double> syy = cov ? Element(&(*cov)[1], 1) : std::nullopt;
    if (sxx && sxy && syy) {
      // The ellipse {c + k (sqrt(l1) cos t e1 + sqrt(l2) sin t e2)} of a 2-D normal with
      // covariance C = sum l_i e_i e_i^T holds probability 1 - exp(-k^2 / 2) (the chi-square
      // distribution with 2 degrees of freedom): k = 1 holds 39 %, k = sqrt(-2 ln 0.05) =
      // 2.448 holds 95 % (e.g. Press et al., Numerical Recipes, 3rd ed., sec. 15.6.5).
      Eigen::Matrix2d c;
      c << *sxx, *sxy, *sxy, *syy;
      const Eigen::SelfAdjointEigenSolver<Eigen::Matrix2d> eig(c);
      const double k95 = std::sqrt(-2.0 * std::log(0.05));
      const double major_mm = 1e3 * k95 * std::sqrt(std::max(0.0, eig.eigenvalues()[1]));
      note = fmt::format(" The 95 % ellipse's half-axes are {} mm and {} mm.", Plain(major_mm, 2),
                         Plain(1e3 * k95 * std::sqrt(std::max(0.0, eig.eigenvalues()[0])), 2));
      zoom_half_mm = 1.4 * major_mm;
      for (const auto& [k, label, colour] : {std::tuple{1.0, "measured CM, 1-sigma ellipse (39 %)", "#1f5fa8"},
                                             std::tuple{k95, "measured CM, 95 % ellipse", "#5b8fd0"}}) {
        PlotSeries ring{label, {}, {}, colour, SeriesStyle::kLine, 1.4, k > 1.0};
        for (int i = 0; i <= 72; ++i) {
          const double t = 2 * M_PI * i / 72;
          const Eigen::Vector2d p =
              Eigen::Vector2d(*cx, *cy) +
              k * (std::sqrt(std::max(0.0, eig.eigenvalues()[0])) * std::cos(t) * eig.eigenvectors().col(0) +
                   std::sqrt(std::max(0.0, eig.eigenvalues()[1])) * std::sin(t) * eig.eigenvectors().col(1));
          ring.x.push_back(1e3 * p.x());
          ring.y.push_back(1e3 * p.y());
        }
        cm_marks.push_back(ring);
      }
    }
    cm_marks.push_back({"measured CM", {1e3 * *cx}, {1e3 * *cy}, "#1f5fa8", SeriesStyle::kDots, 4.5});
  } else if (const std::optional<Eigen::Vector3d> point = Vector3(r, "cm.line_point_body_m")) {
    // The CM lies on a line along the undetermined direction: draw it.
    const json* dirs = Find(r, "cm.unobservable_body");
    if (dirs && dirs->size() == 1) {
      const std::optional<Eigen::Vector3d> u = Vector3((*dirs)[0], "");
      if (u) {
        PlotSeries line{"measured CM lies on this line (one direction undetermined)", {}, {}, "#1f5fa8",
                        SeriesStyle::kLine, 2.0, true};
        for (double s : {-0.2, 0.2}) {
          line.x.push_back(1e3 * (point->x() + s * u->x()));
          line.y.push_back(1e3 * (point->y() + s * u->y()));
        }
        cm_marks.push_back(line);
      }
    }
    note = " The CM's position in this plane is not determined by the throw: see the warnings.";
  }
  for (const PlotSeries& s : cm_marks) plot.Add(s);
  std::string html = Figure(plot.Render(),
                            "The body's markers seen from +z of the body frame (x right, y up), with the design CM "
                            "from the parts list and the measured CM and its uncertainty ellipses in the x-y plane." +
                                note);
  if (zoom_half_mm > 0) {
    // A close view: the ellipses, and the design CM when it is near enough to share the view.
    if (design && (*design - Eigen::Vector2d(1e3 * *cx, 1e3 * *cy)).norm() < 6 * zoom_half_mm) {
      zoom_half_mm = std::max(zoom_half_mm, 1.3 * (*design - Eigen::Vector2d(1e3 * *cx, 1e3 * *cy)).cwiseAbs().maxCoeff());
    }
    SvgPlot zoom("body x, mm", "body y, mm", 600, 340);
    zoom.SetId("cmzoom");
    zoom.SetEqualAspect();
    zoom.SetXRange(1e3 * *cx - zoom_half_mm, 1e3 * *cx + zoom_half_mm);
    zoom.SetYRange(1e3 * *cy - zoom_half_mm, 1e3 * *cy + zoom_half_mm);
    for (const PlotSeries& s : cm_marks) zoom.Add(s);
    html += Figure(zoom.Render(), fmt::format("Close view of the measured CM ({} mm across): the 1-sigma ellipse holds "
                                              "39 % of the probability in two dimensions, the dashed one 95 %.",
                                              Plain(2 * zoom_half_mm, 2)));
  }
  return "<div class=\"grid\">\n" + html + "</div>\n";
}

// One camera's image (`camera`: its index; a file without the column has one camera).
// `cameras`: how many the fit used (the caption names the camera when more than one).
std::string ImagePlanePlot(const ReportData& data, int camera, int cameras) {
  SvgPlot plot("image x, px", "image y, px (down)", 600, 420);
  plot.SetId(cameras > 1 ? fmt::format("image-{}", camera) : "image");
  plot.SetEqualAspect();
  plot.InvertY();
  auto this_camera = [camera](const CsvTable& table) {
    std::vector<bool> keep(table.Rows(), true);
    if (table.Has("camera")) {
      const std::vector<double> index = table.Values("camera");
      for (size_t i = 0; i < keep.size(); ++i) keep[i] = index[i] == camera;
    }
    return keep;
  };
  if (data.tracks && data.tracks->Has("x_px")) {
    const std::vector<bool> keep = this_camera(*data.tracks);
    const std::vector<double> x = data.tracks->Values("x_px"), y = data.tracks->Values("y_px");
    PlotSeries all{"all detections in the clip", {}, {}, "#c8c8c8", SeriesStyle::kDots, 1.2};
    for (size_t i = 0; i < x.size(); ++i) {
      if (!keep[i]) continue;
      all.x.push_back(x[i]);
      all.y.push_back(y[i]);
    }
    plot.Add(all);
  }
  const std::vector<bool> keep = this_camera(data.residuals);
  const std::vector<double> x = data.residuals.Values("x_px"), y = data.residuals.Values("y_px");
  const std::vector<double> rx = data.residuals.Values("residual_x_px"), ry = data.residuals.Values("residual_y_px");
  const std::vector<double> marker = data.residuals.Values("marker");
  std::map<int, PlotSeries> observed, predicted;
  for (size_t i = 0; i < x.size(); ++i) {
    if (!keep[i]) continue;
    const int id = std::isfinite(marker[i]) ? static_cast<int>(marker[i]) : -1;
    if (!observed.count(id)) {
      const char* colour = kPalette[observed.size() % std::size(kPalette)];
      observed[id] = {"", {}, {}, colour, SeriesStyle::kDots, 1.6};
      predicted[id] = {"", {}, {}, colour, SeriesStyle::kLine, 1.0};
    }
    observed[id].x.push_back(x[i]);
    observed[id].y.push_back(y[i]);
    // residual = predicted - observed (residuals.csv), so predicted = observed + residual.
    predicted[id].x.push_back(x[i] + rx[i]);
    predicted[id].y.push_back(y[i] + ry[i]);
  }
  bool first = true;
  for (auto& [id, s] : observed) {
    s.label = fmt::format("marker {}", id);
    plot.Add(s);
  }
  for (auto& [id, s] : predicted) {
    s.label = first ? "fitted projections (lines)" : "";
    s.colour = "#222";
    s.size = 0.8;
    first = false;
    plot.Add(s);
  }
  return Figure(plot.Render(),
                (cameras > 1 ? fmt::format("Camera {} of {}: image", camera + 1, cameras) : std::string("Image")) +
                    "-plane tracks: each fitted marker sighting (coloured dots, one colour per marker) and "
                    "the fit's projection of the same marker (thin dark lines); detections outside the "
                    "fitted frames in grey. Pixels of the original image, y down.");
}

// One image-plane plot per camera of the fit.
std::string ImagePlanePlots(const ReportData& data) {
  const json* cameras = Find(data.results, "cameras");
  const int count = cameras && cameras->is_array() && !cameras->empty() ? static_cast<int>(cameras->size()) : 1;
  std::string html;
  for (int k = 0; k < count; ++k) html += ImagePlanePlot(data, k, count);
  return html;
}

std::string CmPathPlot(const ReportData& data) {
  const json& r = data.results;
  const std::optional<Eigen::Vector3d> r0 = PositionOrNull(r, "launch.position_m"), v0 = Vector3(r, "launch.velocity_mps"),
                                       g = Vector3(r, "gravity.world_mps2");
  const std::optional<double> t0 = Number(r, "launch.time_s");
  if (!r0 || !v0 || !g || !t0 || g->norm() == 0) {
    return "<p>CM path: " + NotDetermined("results.json lacks the launch state or gravity") + "</p>";
  }
  // Axes of the flight plane: "up" against gravity, "along" the launch velocity's
  // horizontal part (or any horizontal direction for a vertical throw).
  const Eigen::Vector3d up = -g->normalized();
  Eigen::Vector3d along = *v0 - v0->dot(up) * up;
  if (along.norm() < 1e-9) along = up.unitOrthogonal();
  along.normalize();
  SvgPlot plot("horizontal distance from launch along the throw, m", "height above launch, m", 600, 340);
  plot.SetId("cmpath");
  plot.SetEqualAspect();
  const std::vector<double> t = data.frames.Values("time_s");
  PlotSeries fitted{"fitted CM path", {}, {}, "#1f5fa8", SeriesStyle::kLine, 2.0};
  PlotSeries measured{"CM from each frame alone", {}, {}, "#d9730d", SeriesStyle::kDots, 2.0};
  PlotSeries vacuum{"vacuum parabola from the launch state", {}, {}, "#222", SeriesStyle::kLine, 1.2, true};
  for (const auto& [prefix, series] : {std::pair{"cm_", &fitted}, std::pair{"cm_measured_", &measured}}) {
    const std::string p = prefix;
    if (!data.frames.Has(p + "x_m")) continue;
    const std::vector<double> x = data.frames.Values(p + "x_m"), y = data.frames.Values(p + "y_m"),
                              z = data.frames.Values(p + "z_m");
    for (size_t i = 0; i < x.size(); ++i) {
      const Eigen::Vector3d d = Determined(Eigen::Vector3d(x[i], y[i], z[i])) - Determined(*r0);
      series->x.push_back(d.dot(along));
      series->y.push_back(d.dot(up));
    }
  }
  if (!t.empty()) {
    // r(t) = r0 + v0 (t - t0) + g (t - t0)^2 / 2: the CM in a vacuum (Newton's second law
    // under uniform gravity).
    const double t_end = *std::max_element(t.begin(), t.end());
    for (int i = 0; i <= 100; ++i) {
      const double tau = (t_end - *t0) * i / 100.0;
      const Eigen::Vector3d d = *v0 * tau + 0.5 * *g * tau * tau;
      vacuum.x.push_back(d.dot(along));
      vacuum.y.push_back(d.dot(up));
    }
  }
  plot.Add(measured);
  plot.Add(fitted);
  plot.Add(vacuum);
  const std::string drag = Text(r, "drag.model");
  return Figure(plot.Render(),
                "The CM's path in the vertical plane of the throw. " +
                    std::string(drag == "none" || drag.empty()
                                    ? "The fitted model is the vacuum one, so its path and the parabola coincide."
                                    : "The fitted model includes the air (" + H(drag) +
                                          "); the gap to the parabola is the drag's effect.") +
                    " A frame's own CM is left out where the frame alone cannot give it.");
}

std::string ResidualsPerFramePlot(const ReportData& data, const TimeAxis& time) {
  SvgPlot plot(time.Label(), "reprojection rms per frame, px", 600, 280);
  plot.SetId("resframe");
  const std::vector<double> t = time.Of(data.frames);
  plot.Add({"rms of the frame's inlier sightings", t, data.frames.Values("rms_px"), "#1f5fa8", SeriesStyle::kLine, 1.4});
  if (const std::optional<double> rms = Number(data.results, "fit.rms_px")) {
    plot.Add({fmt::format("whole fit: {} px", Plain(*rms, 3)), {t.empty() ? 0.0 : t.front(), t.empty() ? 0.0 : t.back()},
              {*rms, *rms}, "#222", SeriesStyle::kLine, 1.0, true});
  }
  MarkWindowAndFlags(&plot, data, time, true);
  return Figure(plot.Render(), "Reprojection residual per frame (rms over x and y of the frame's inlier sightings), "
                               "with the free-flight window and the frames named by flags.");
}

std::string ResidualsPerMarkerPlot(const ReportData& data) {
  const json* markers = Find(data.results, "diagnostics.per_marker");
  if (!markers || !markers->is_array() || markers->empty()) {
    return "<p>Residuals per marker: " + NotDetermined("no per-marker diagnostics in results.json") + "</p>";
  }
  SvgPlot plot("marker id", "residual, px", 600, 240);
  plot.SetId("resmarker");
  PlotSeries rms{"rms", {}, {}, "#1f5fa8", SeriesStyle::kBars, 7.0};
  PlotSeries max{"largest", {}, {}, "#c0392b", SeriesStyle::kCrosses, 4.0};
  // A value results.json could not hold as a number (an infinite residual is written as
  // null) is left out of the plot.
  for (const json& m : *markers) {
    const double marker = Number(m, "marker").value_or(std::nan(""));
    rms.x.push_back(marker);
    rms.y.push_back(Number(m, "rms_px").value_or(std::nan("")));
    max.x.push_back(marker);
    max.y.push_back(Number(m, "max_px").value_or(std::nan("")));
  }
  plot.Add(rms);
  plot.Add(max);
  return Figure(plot.Render(), "Residuals per marker over the fitted frames: the rms (bars) and the largest "
                               "(crosses). One marker far above the others suggests a misidentified or damaged marker.");
}

std::string SpinPlot(const ReportData& data, const TimeAxis& time) {
  SvgPlot plot(time.Label(), "angular velocity (world frame), rad/s", 600, 280);
  plot.SetId("spin");
  const std::vector<double> t = time.Of(data.frames);
  AddWorldComponents(&plot, data.frames, t, "omega_{}_radps", "omega {}");
  std::vector<double> magnitude;
  const std::vector<double> wx = data.frames.Values("omega_x_radps"), wy = data.frames.Values("omega_y_radps"),
                            wz = data.frames.Values("omega_z_radps");
  for (size_t i = 0; i < wx.size(); ++i) magnitude.push_back(std::sqrt(wx[i] * wx[i] + wy[i] * wy[i] + wz[i] * wz[i]));
  plot.Add({"|omega|", t, magnitude, "#222", SeriesStyle::kLine, 1.2, true});
  MarkWindowAndFlags(&plot, data, time, false);
  return Figure(plot.Render(), "The fitted angular velocity in the world frame over the fitted frames (1 rev/s = "
                               "6.283 rad/s).");
}

// The body's inertia tensor divided by I3, from inertia.ratios and inertia.axes_body; a
// symmetric top's equal pair (null columns) is completed from the distinct axis.
std::optional<Eigen::Matrix3d> InertiaOverI3(const json& r) {
  const json* ratios = Find(r, "inertia.ratios");
  const json* axes = Find(r, "inertia.axes_body");
  if (!ratios || !axes) return std::nullopt;
  const std::optional<double> r1 = Element(ratios, 0), r2 = Element(ratios, 1);
  if (!r1 || !r2) return std::nullopt;
  const Eigen::Vector3d moments(*r1, *r2, 1.0);
  std::vector<int> known;
  Eigen::Matrix3d a = Eigen::Matrix3d::Zero();
  for (int k = 0; k < 3; ++k) {
    bool ok = true;
    for (int row = 0; row < 3; ++row) {
      const std::optional<double> e = Element(&(*axes)[row], k);
      if (!e) ok = false;
      else a(row, k) = *e;
    }
    if (ok) known.push_back(k);
  }
  if (known.size() == 3) return a * moments.asDiagonal() * a.transpose();
  if (known.size() == 1) {
    // I = m_eq 1 + (m_k - m_eq) a_k a_k^T, with m_eq the moment of the other two (equal) axes.
    const int k = known[0];
    const double m_eq = moments[(k + 1) % 3];
    const Eigen::Vector3d ak = a.col(k).normalized();
    return Eigen::Matrix3d(m_eq * Eigen::Matrix3d::Identity() + (moments[k] - m_eq) * ak * ak.transpose());
  }
  return std::nullopt;
}

std::string ConservationPlots(const ReportData& data, const TimeAxis& time) {
  const json& r = data.results;
  const std::vector<double> t = time.Of(data.frames);
  const std::optional<Eigen::Vector3d> g = Vector3(r, "gravity.world_mps2");
  std::string html;
  {
    // Mechanical energy per unit mass, e = |v|^2 / 2 - g . r (J/kg), constant in a vacuum.
    SvgPlot plot(time.Label(), "change since the first frame, J/kg", 600, 260);
    plot.SetId("energy");
    plot.SetMinYSpan(0.02);
    PlotSeries e{"CM energy per kg (kinetic + potential)", {}, {}, "#1f5fa8", SeriesStyle::kLine, 1.6};
    const std::vector<double> x = data.frames.Values("cm_x_m"), y = data.frames.Values("cm_y_m"),
                              z = data.frames.Values("cm_z_m"), vx = data.frames.Values("v_x_mps"),
                              vy = data.frames.Values("v_y_mps"), vz = data.frames.Values("v_z_mps");
    double e0 = std::nan("");
    for (size_t i = 0; i < t.size() && g; ++i) {
      const Eigen::Vector3d v(vx[i], vy[i], vz[i]), p = Determined(Eigen::Vector3d(x[i], y[i], z[i]));
      const double value = 0.5 * v.squaredNorm() - g->dot(p);
      if (!std::isfinite(e0) && std::isfinite(value)) e0 = value;
      e.y.push_back(value - e0);
    }
    e.x = t;
    plot.Add(e);
    MarkWindowAndFlags(&plot, data, time, false);
    html += Figure(plot.Render(),
                   "Energy check: the CM's kinetic plus potential energy per kilogram, |v|^2/2 - g.r, along the "
                   "fitted path. It stays constant in a vacuum and falls by the drag's work in air.");
  }
  const std::optional<Eigen::Matrix3d> inertia = InertiaOverI3(r);
  if (!inertia) {
    html += "<figure><p><b>Angular-momentum check:</b> " +
            NotDetermined(Text(r, "rotation.model") == "constant-spin"
                              ? "the constant-spin model spins about one principal axis, so the angular momentum "
                                "lies along the spin by construction and the inertia is not estimated"
                              : "the inertia's principal axes and ratios are not in results.json") +
            ".</p></figure>\n";
    return html;
  }
  // L = R I R^T w (world frame), with I / I3 from the fit: its size relative to the first
  // frame and its direction's angle from the first frame's (constant for a torque-free body).
  SvgPlot plot(time.Label(), "change since the first frame", 600, 260);
  plot.SetId("momentum");
  plot.SetMinYSpan(0.2);
  PlotSeries size{"|L| change, % (L per I3)", {}, {}, "#1f5fa8", SeriesStyle::kLine, 1.6};
  PlotSeries angle{"direction of L, deg from the first frame's", {}, {}, "#d9730d", SeriesStyle::kLine, 1.6};
  const std::vector<double> qw = data.frames.Values("q_w"), qx = data.frames.Values("q_x"),
                            qy = data.frames.Values("q_y"), qz = data.frames.Values("q_z");
  const std::vector<double> wx = data.frames.Values("omega_x_radps"), wy = data.frames.Values("omega_y_radps"),
                            wz = data.frames.Values("omega_z_radps");
  std::optional<Eigen::Vector3d> l0;
  for (size_t i = 0; i < t.size(); ++i) {
    const Eigen::Matrix3d rot = Eigen::Quaterniond(qw[i], qx[i], qy[i], qz[i]).normalized().toRotationMatrix();
    const Eigen::Vector3d l = rot * *inertia * rot.transpose() * Eigen::Vector3d(wx[i], wy[i], wz[i]);
    if (!l0) l0 = l;
    size.x.push_back(t[i]);
    size.y.push_back(l0->norm() > 0 ? 100.0 * (l.norm() / l0->norm() - 1.0) : std::nan(""));
    angle.x.push_back(t[i]);
    angle.y.push_back(180.0 / M_PI * std::atan2(l.cross(*l0).norm(), l.dot(*l0)));
  }
  plot.Add(size);
  plot.Add(angle);
  html += Figure(plot.Render(),
                 "Angular-momentum check: L = R I R<sup>T</sup> &omega; in the world frame from the fitted "
                 "orientation, spin and principal moments (the flight gives I's ratios, so L is per I3). A "
                 "torque-free body keeps both constant; a drift shows an integration or model error.");
  return html;
}

std::string AccelerationPlot(const ReportData& data, const TimeAxis& time) {
  if (!data.frames.Has("accel_residual_x_mps2")) return "";
  SvgPlot plot(time.Label(), "CM acceleration minus g, m/s²", 600, 260);
  plot.SetId("accel");
  const std::vector<double> t = time.Of(data.frames);
  AddWorldComponents(&plot, data.frames, t, "accel_residual_{}_mps2", "{} (world)");
  MarkWindowAndFlags(&plot, data, time, false);
  return Figure(plot.Render(),
                "The data's own check of free flight: the acceleration of the CM measured frame by frame (a local "
                "quadratic over " +
                    fmt::format("{}", Number(data.results, "diagnostics.acceleration_smoothing_frames").value_or(0)) +
                    " frames) minus gravity. Near zero in a vacuum; a hand, a net or strong drag shows as a "
                    "departure.");
}

// ---- tables ----------------------------------------------------------------------------------

std::string Row(const std::string& name, const std::string& value, const std::string& note = "") {
  return "<tr><th>" + name + "</th><td>" + value + "</td><td class=\"note\">" + note + "</td></tr>\n";
}

// A measured value's cell: "value ± sigma unit", or "not determined" with the reason, which
// goes to the row's note column.
struct Cell {
  std::string value;
  std::string reason;  // set when not determined
};

std::string Row(const std::string& name, const Cell& cell, const std::string& note = "") {
  if (cell.reason.empty()) return Row(name, cell.value, note);
  return Row(name, cell.value, H(cell.reason) + (note.empty() ? "" : "; " + note));
}

Cell Measured(const std::optional<double>& value, const std::optional<double>& sigma, double scale,
              const std::string& unit, const std::string& reason) {
  if (!value) return {kNotDetermined, reason.empty() ? "not in results.json" : reason};
  if (!sigma) return {H(Plain(*value * scale)) + " " + unit + " <span class=\"note\">(uncertainty not determined)</span>", ""};
  return {FormatWithSigma(*value, *sigma, scale) + " " + unit, ""};
}

std::string HeadlineTable(const ReportData& data) {
  const json& r = data.results;
  std::string t = "<table class=\"results\">\n";
  const json* cm = Find(r, "cm.body_m");
  const json* sigma = Find(r, "cm.sigma_m");
  const json* interval = Find(r, "cm.interval95_m");
  const char* axes = "xyz";
  const std::string unobservable_reason =
      "the throw spins about an axis fixed in space, so the CM cannot be located along it (see the warnings)";
  for (int i = 0; i < 3; ++i) {
    std::string note;
    if (interval && (*interval)[i].is_array()) {
      // Both bounds to the same decimals: two significant digits of the 1-sigma.
      const double low = 1e3 * (*interval)[i][0].get<double>(), high = 1e3 * (*interval)[i][1].get<double>();
      const double spread = std::max(std::abs(high - low) / 4.0, 1e-9);
      const int decimals = std::clamp(1 - static_cast<int>(std::floor(std::log10(spread))), 0, 9);
      note = fmt::format("95 %: {:.{}f} to {:.{}f} mm", low, decimals, high, decimals);
    }
    t += Row(fmt::format("CM in the body frame, {}", axes[i]),
             Measured(Element(cm, i), Element(sigma, i), 1e3, "mm", unobservable_reason), note);
  }
  if (const std::optional<Eigen::Vector3d> d = Vector3(r, "cm.design_body_m")) {
    t += Row("design CM (parts list)", fmt::format("[{}, {}, {}] mm", Plain(1e3 * d->x()), Plain(1e3 * d->y()),
                                                   Plain(1e3 * d->z())),
             "computed from the body file's parts; not a measurement");
  }
  if (const json* refs = Find(r, "cm.from_references"); refs && refs->is_object()) {
    for (const auto& [name, ref] : refs->items()) {
      const std::optional<double> dist = Number(ref, "distance_m");
      const std::optional<double> sd = Number(ref, "sigma_distance_m");
      std::string vec;
      if (const std::optional<Eigen::Vector3d> v = Vector3(ref, "vector_m")) {
        vec = fmt::format("vector [{}, {}, {}] mm", Plain(1e3 * v->x()), Plain(1e3 * v->y()), Plain(1e3 * v->z()));
      }
      t += Row("CM from '" + H(name) + "', distance", Measured(dist, sd, 1e3, "mm", unobservable_reason), vec);
    }
  }
  t += Row("launch speed",
           Measured(Number(r, "launch.speed_mps"), Number(r, "launch.sigma_speed_mps"), 1.0, "m/s", "no launch state"),
           fmt::format("at frame {}, t = {} s", Number(r, "launch.frame").value_or(0),
                       Plain(Number(r, "launch.time_s").value_or(0), 4)));
  t += Row("launch angle above the horizontal",
           Measured(Number(r, "launch.angle_deg"), Number(r, "launch.sigma_angle_deg"), 1.0, "°", "no launch state"));
  // Gravity's direction when the fit measured it (gravity given as a magnitude, or
  // --estimate-gravity): how far the measured vertical lies from the world's -z.
  if (const std::optional<Eigen::Vector3d> u = Vector3(r, "gravity.direction_world");
      u && Number(r, "gravity.sigma_direction_deg").value_or(0) > 0) {
    // Against the world's -z (a located camera's vertical); a direction far from it is in
    // a camera's own frame (no pose: x right, y down), compared with the image's down.
    const double from_z = std::acos(std::clamp(-u->z(), -1.0, 1.0)) * 180 / M_PI;
    const double from_y = std::acos(std::clamp(u->y(), -1.0, 1.0)) * 180 / M_PI;
    t += Row("gravity's direction",
             fmt::format("[{:.5f}, {:.5f}, {:.5f}] ± {} °", u->x(), u->y(), u->z(),
                         Plain(*Number(r, "gravity.sigma_direction_deg"), 3)),
             from_z <= 45 ? fmt::format("measured from the flight; {} ° from the world's −z",
                                        Plain(from_z, 3))
                          : fmt::format("measured from the flight; {} ° from the image's down "
                                        "direction (camera frame)",
                                        Plain(from_y, 3)));
  }
  {
    const std::optional<double> rate = Number(r, "spin.rate_rev_per_s"), sr = Number(r, "spin.sigma_rate_rev_per_s");
    t += Row("spin rate", Measured(rate, sr, 1.0, "rev/s", "no spin estimate"),
             rate ? Measured(rate, sr, 60.0, "rpm", "").value : "");
  }
  t += Row("rotation model", H(Text(r, "rotation.model")), H(Text(r, "rotation.reason")));
  {
    const json* ratios = Find(r, "inertia.ratios");
    const json* sr = Find(r, "inertia.sigma_ratios");
    const std::string reason = Text(r, "rotation.model") == "constant-spin"
                                   ? "a spin about one principal axis does not reveal the other moments"
                                   : "the data do not support a torque-free model's inertia";
    const std::string held = Flag(r, "inertia.held_from_parts") ? "held at the parts list's, not measured" : "";
    t += Row("principal moments, I1/I3", Measured(Element(ratios, 0), Element(sr, 0), 1.0, "", reason), held);
    t += Row("principal moments, I2/I3", Measured(Element(ratios, 1), Element(sr, 1), 1.0, "", reason), held);
  }
  {
    const std::string model = Text(r, "drag.model");
    t += Row("air model", H(model.empty() ? "none" : model), H(Text(r, "drag.reason")));
    if (model != "none" && !model.empty()) {
      t += Row("drag constant k (a = g - k|v|v)",
               Measured(Number(r, "drag.k_per_m"), Number(r, "drag.sigma_k_per_m"), 1.0, "1/m", "not estimated"));
      std::string notes;
      if (const json* n = Find(r, "drag.notes"); n && n->is_array()) {
        for (const json& s : *n) notes += (notes.empty() ? "" : " ") + s.get<std::string>();
      }
      t += Row("drag coefficient C<sub>d</sub>",
               Measured(Number(r, "drag.cd"), Number(r, "drag.sigma_cd"), 1.0, "",
                        notes.empty() ? "needs the body's mass and aero_reference area" : notes));
      if (Number(r, "drag.k_lift")) {
        t += Row("Magnus coefficient k<sub>L</sub>",
                 Measured(Number(r, "drag.k_lift"), Number(r, "drag.sigma_k_lift"), 1.0, "", ""));
      }
    }
  }
  {
    const std::optional<double> rms = Number(r, "fit.rms_px");
    t += Row("fit", fmt::format("rms {} px over {} sightings ({} outliers), {}", rms ? Plain(*rms, 3) : "?",
                                Number(r, "fit.observations").value_or(0), Number(r, "fit.outliers").value_or(0),
                                Flag(r, "fit.converged") ? "converged" : "<b>not converged</b>"),
             H(Text(r, "fit.model")));
  }
  t += Row("free-flight window",
           fmt::format("frames {} to {} ({} frames)", Number(r, "window.first_frame").value_or(0),
                       Number(r, "window.last_frame").value_or(0), Number(r, "window.frames_used").value_or(0)),
           H(Text(r, "window.criterion")));
  t += "</table>\n";
  return t;
}

std::string WindowAndDiagnostics(const ReportData& data) {
  const json& r = data.results;
  std::string html = "<ul>\n";
  for (const char* end : {"window.start.sentence", "window.end.sentence"}) {
    const std::string s = Text(r, end);
    if (!s.empty()) html += "<li>" + H(s) + "</li>\n";
  }
  const std::string runs = Text(r, "diagnostics.runs_test.sentence");
  if (!runs.empty()) html += "<li>Residual runs test: " + H(runs) + "</li>\n";
  if (const json* check = Find(r, "gravity.check")) html += "<li>Gravity check: " + H(check->value("sentence", "")) + "</li>\n";
  if (const json* flags = Find(r, "diagnostics.flags"); flags && flags->is_array()) {
    for (const json& f : *flags) {
      std::string frames;
      if (f.contains("first_frame") && f["first_frame"].is_number()) {
        frames = fmt::format(" (frames {}", f["first_frame"].get<int>());
        frames += f.contains("last_frame") && f["last_frame"].is_number()
                      ? fmt::format(" to {})", f["last_frame"].get<int>())
                      : std::string(" onwards)");
      }
      html += "<li class=\"flag\">Flag <b>" + H(f.value("kind", "")) + "</b>" + frames + ": " + H(f.value("sentence", "")) + "</li>\n";
    }
  }
  html += "</ul>\n";
  return html;
}

std::string ProvenanceSection(const ReportData& data) {
  const json& r = data.results;
  std::string html = "<table class=\"files\"><tr><th>file</th><th>size</th><th>SHA-256</th></tr>\n";
  if (const json* details = Find(r, "inputs.file_details"); details && details->is_array()) {
    for (const json& f : *details) {
      const std::string size = f.contains("bytes") && f["bytes"].is_number()
                                   ? fmt::format("{} bytes", f["bytes"].get<std::uintmax_t>())
                                   : std::string(kNotDetermined);
      const std::string sha = f.contains("sha256") && f["sha256"].is_string()
                                  ? "<code>" + H(f["sha256"].get<std::string>()) + "</code>"
                                  : NotDetermined(f.value("note", std::string()));
      html += "<tr><td>" + H(f.value("path", "")) + "</td><td>" + size + "</td><td>" + sha + "</td></tr>\n";
    }
  } else if (const json* files = Find(r, "inputs.files"); files && files->is_array()) {
    for (const json& f : *files) {
      html += "<tr><td>" + H(f.get<std::string>()) + "</td><td>" + kNotDetermined + "</td><td>" +
              NotDetermined("results.json was written without file details") + "</td></tr>\n";
    }
  }
  html += "</table>\n<table class=\"results\">\n";
  html += Row("command", "<code>" + H(Text(r, "inputs.command")) + "</code>");
  html += Row("tool", H(Text(r, "tool.name") + " " + Text(r, "tool.version")));
  if (const std::optional<double> fps = Number(r, "inputs.capture_fps")) html += Row("capture rate", Plain(*fps, 6) + " frames/s");
  html += Row("rotation model choice", H(Text(r, "rotation.criterion")));
  html += Row("air model choice", H(Text(r, "drag.criterion")));
  html += Row("free-flight window", Flag(r, "window.detected") ? "found from the data" : "given, or every frame",
              H(Text(r, "window.criterion")));
  if (const std::optional<Eigen::Vector3d> g = Vector3(r, "gravity.world_mps2")) {
    html += Row("gravity (world)", fmt::format("[{}, {}, {}] m/s²", Plain(g->x()), Plain(g->y()), Plain(g->z())),
                Flag(r, "gravity.estimated") ? "estimated by the fit" : "as given");
  }
  if (const std::optional<double> density = Number(r, "drag.air_density_kgpm3")) {
    html += Row("air density", Plain(*density) + " kg/m³", H(Text(r, "drag.air")));
  }
  html += "</table>\n";
  return html;
}

constexpr const char* kMethod = R"(<p><b>Model.</b> One physical model is fitted to every marker
sighting of every fitted frame at once: the centre of mass (CM) moves on a ballistic path under
gravity (optionally with quadratic drag, a = g - k|v|v, and a Magnus lift), and the body rotates
as a rigid body free of torque about its CM (a constant spin, a symmetric top or a free top with
three unequal moments). Each marker's position in the world is the CM plus the rotated marker
offset from the CM; it is projected through the calibrated camera (pinhole with Brown-Conrady
distortion).</p>
<p><b>Estimator.</b> The CM in the body frame, the launch state, the orientation and spin, and the
model's other parameters minimise the sum of squared reprojection errors in pixels (Ceres
Solver, Levenberg-Marquardt), after a robust first pass that marks outliers. The rotation and air
models are chosen by the Bayesian information criterion unless asked for; the free-flight window
is found from the data unless given.</p>
<p><b>Uncertainty.</b> The covariance of the parameters is the sandwich
A<sup>+</sup> (J<sup>T</sup>&Omega;J) A<sup>+</sup>, A = J<sup>T</sup>J, with J the Jacobian at the
solution (A<sup>+</sup> from ceres::Covariance, a Moore-Penrose inverse) and &Omega; the covariance of
the pixel errors: one series per camera, marker and image coordinate, each with its own noise level
and a lag-1 correlation in time (an AR(1) model, a gap of g frames correlating as &rho;<sup>g</sup>),
both estimated from that series' residuals and corrected for what the fit absorbed. With independent
errors of one level it is the usual s<sup>2</sup> (J<sup>T</sup>J)<sup>+</sup>. Sightings beyond 4.29
robust standard deviations of their own marker are left out as outliers. Derived quantities (speed,
angle, spin rate, distances) are propagated to first order. 1-sigma values are the square roots of
the variances; 95 % intervals are &plusmn;1.96 sigma. The sigmas do not cover a model error, nor the
camera's own uncertainty. A direction the throw does not determine (the CM along a fixed spin axis)
is reported as not determined, never as a number. See docs/method.md for the equations and
sources.</p>
<p><b>The verdict</b> at the top is poor when the fit did not converge, when more than 20 % of the
sightings were set aside one marker at a time, when its rms exceeds 1 px
(a marker's centre is found to a fraction of a pixel) or is more than twice the median frame's
rms (some frames the model misses), when the runs test finds residuals so correlated in time that
its AR(1) factor on the sigmas exceeds 3 (a misfit rather than noise), or when a
flag says the body left the modelled motion within the fitted frames (release, contact, impact,
frames; flags outside them mark the window's ends). It asks for caution for 5-20 % of the sightings
set aside one marker at a time, for a marker flag (one marker partly hidden or shadowed: its
sightings are set aside and the numbers come from the rest), for residuals correlated in time that
the sigmas hold as noise, and for warnings.</p>
)";

constexpr const char* kStyle = R"(
body { font-family: sans-serif; max-width: 1240px; margin: 1em auto; padding: 0 1em; color: #222; line-height: 1.4; }
h1 { font-size: 1.5em; margin-bottom: 0.2em; } h2 { font-size: 1.2em; border-bottom: 1px solid #ccc; margin-top: 1.6em; }
.sub { color: #555; margin-top: 0; }
.verdict { border: 2px solid; border-radius: 6px; padding: 0.6em 1em; margin: 1em 0; }
.verdict h2 { border: none; margin: 0 0 0.3em 0; font-size: 1.3em; }
.sound { background: #e8f5ec; border-color: #2e8b57; } .sound h2 { color: #1e6b40; }
.caution { background: #fff6e0; border-color: #d9a400; } .caution h2 { color: #8a6500; }
.poor { background: #fdeaea; border-color: #c0392b; } .poor h2 { color: #a0281c; }
.warnings li { margin-bottom: 0.3em; } .flag { color: #8a1f14; }
table { border-collapse: collapse; margin: 0.5em 0; } th, td { text-align: left; padding: 3px 10px 3px 0; vertical-align: top; }
table.results th { font-weight: normal; color: #444; white-space: nowrap; } table.results td { font-weight: bold; }
table.results td.note { font-weight: normal; color: #555; font-size: 0.9em; }
table.results td:nth-child(2) { min-width: 15em; }
table.files td, table.files th { border-bottom: 1px solid #eee; font-size: 0.9em; } code { font-size: 0.85em; word-break: break-all; }
.nd { color: #8a6500; font-style: italic; font-weight: bold; }
.grid { display: flex; flex-wrap: wrap; gap: 12px; }
figure { margin: 0.5em 0; width: 600px; max-width: 100%; break-inside: avoid; page-break-inside: avoid; }
.grid figure { width: calc(50% - 8px); min-width: 480px; }
figure svg { max-width: 100%; height: auto; } figcaption { font-size: 0.88em; color: #444; }
@media print { body { max-width: none; margin: 0; } .grid { display: block; } h2 { break-after: avoid; } }
)";

}  // namespace

std::string FormatWithSigma(double value, double sigma, double scale) {
  const double v = value * scale, s = std::abs(sigma * scale);
  const int decimals = DecimalsForSigma(s);
  return fmt::format("{:.{}f} ± {:.{}f}", v, decimals, s, decimals);
}

ReportData ReadReportData(const std::filesystem::path& dir) {
  const std::filesystem::path results_path = dir / "results.json";
  std::ifstream in(results_path);
  if (!in) throw InputError(fmt::format("{}: cannot be read (the report is made from a results folder)", results_path.string()));
  json results;
  try {
    results = json::parse(in);
  } catch (const json::exception& e) {
    throw InputError(fmt::format("{}: not valid JSON: {}", results_path.string(), e.what()));
  }
  for (const char* key : {"cm", "launch", "spin", "window", "fit"}) {
    if (!results.contains(key)) throw InputError(fmt::format("{}: expected the key '{}'", results_path.string(), key));
  }
  ReportData data{results, CsvTable::Read(dir / "frames.csv"), CsvTable::Read(dir / "residuals.csv"), std::nullopt};
  for (const char* column : {"frame", "time_s", "rms_px", "q_w", "omega_x_radps", "v_x_mps"}) data.frames.Column(column);
  for (const char* column : {"marker", "x_px", "y_px", "residual_x_px", "residual_y_px"}) data.residuals.Column(column);
  if (std::filesystem::exists(dir / "tracks.csv")) data.tracks = CsvTable::Read(dir / "tracks.csv");
  return data;
}

Verdict AssessFit(const ReportData& data) {
  const json& r = data.results;
  Verdict v;
  std::vector<std::string> poor, caution;
  if (!Flag(r, "fit.converged")) poor.push_back("the solver did not converge, so the numbers below are not a minimum");
  const std::optional<double> rms = Number(r, "fit.rms_px");
  const double typical = Median(data.frames.Values("rms_px"));
  if (rms && *rms > 1.0) {
    poor.push_back(fmt::format("the reprojection rms is {} px, where a marker's centre is found to a fraction of a "
                               "pixel: the model does not describe these frames",
                               Plain(*rms, 3)));
  } else if (rms && std::isfinite(typical) && typical > 0 && *rms > 2.0 * typical) {
    poor.push_back(fmt::format("the reprojection rms ({} px) is {:.1f} times the median frame's ({} px): some frames "
                               "are far worse than the rest",
                               Plain(*rms, 3), *rms / typical, Plain(typical, 3)));
  }
  if (const json* white = Find(r, "diagnostics.runs_test.white"); white && white->is_boolean() && !white->get<bool>() &&
                                                                    Number(r, "diagnostics.runs_test.runs").value_or(0) > 0) {
    // The sigmas allow for it as noise (the per-series AR(1) sandwich, docs/method.md), by
    // about sqrt((1 + rho) / (1 - rho)): beyond 1.5 the residuals' pattern is more likely a
    // misfit of the model, which no sigma covers; below it mostly the video's compression.
    const double factor = std::sqrt(Number(r, "diagnostics.runs_test.variance_factor").value_or(1.0));
    // Beyond a factor 3 (rho above 0.8) the pattern is a misfit of the model rather than
    // noise (the strong-drag paddle fitted without drag: rho 0.82); below it the sigmas hold
    // it as noise.
    if (factor > 3.0) {
      poor.push_back(fmt::format("the residuals are strongly correlated in time (runs test, a factor {:.2f} on the "
                                 "sigmas): a pattern this strong is a misfit of the model, which the uncertainties "
                                 "do not cover",
                                 factor));
    } else {
      caution.push_back(fmt::format("the residuals are correlated in time (runs test): the uncertainties allow for "
                                    "it as noise (about a factor {:.2f} wider)",
                                    factor));
    }
  }
  // Sightings set aside: those of the frames the body left the motion in are judged by the
  // 'frames' flag; those set aside one marker at a time (a marker partly hidden, shadowed or
  // merged there) leave the numbers to the rest unless they are a large share.
  const double one_at_a_time = SetAsideOneMarkerAtATime(data.residuals);
  if (one_at_a_time > 0.20) {
    poor.push_back(fmt::format("{:.0f} % of the sightings were left out as outliers, one marker at a time: the "
                               "markers' centres are not to be trusted in this clip",
                               100.0 * one_at_a_time));
  } else if (one_at_a_time > 0.05) {
    caution.push_back(fmt::format("{:.0f} % of the sightings were left out as outliers, one marker at a time (a "
                                  "marker partly hidden, shadowed or merged there); the numbers come from the rest",
                                  100.0 * one_at_a_time));
  }
  if (const json* flags = Find(r, "diagnostics.flags"); flags && flags->is_array()) {
    // One line per kind of flag: the first one's sentence, and how many more (all of them are
    // listed under the diagnostics).
    std::vector<std::string> kinds;
    std::map<std::string, std::pair<int, std::string>> by_kind;
    // A flag outside the fitted frames (the hand before the window, the net after it) says
    // where the window ends, not that the fit is wrong: it is listed under the diagnostics.
    const double first = Number(r, "window.first_frame").value_or(-HUGE_VAL);
    const double last = Number(r, "window.last_frame").value_or(HUGE_VAL);
    for (const json& f : *flags) {
      const std::string kind = f.value("kind", "");
      if (kind == "correlated-residuals") continue;  // the runs test's, judged above
      const double from = f.contains("first_frame") && f["first_frame"].is_number() ? f["first_frame"].get<double>() : -HUGE_VAL;
      const double to = f.contains("last_frame") && f["last_frame"].is_number() ? f["last_frame"].get<double>() : HUGE_VAL;
      if (to < first || from > last) continue;
      auto [it, added] = by_kind.try_emplace(kind, 0, f.value("sentence", std::string()));
      if (added) kinds.push_back(kind);
      ++it->second.first;
    }
    for (const std::string& kind : kinds) {
      const auto& [count, sentence] = by_kind[kind];
      (IsBreakFlag(kind) ? poor : caution)
          .push_back("flag '" + kind + "': " + sentence +
                     (count > 1 ? fmt::format(" (and {} more such flags, listed under the diagnostics)", count - 1)
                                : std::string()));
    }
  }
  if (const json* warnings = Find(r, "warnings"); warnings && warnings->is_array() && !warnings->empty()) {
    caution.push_back(fmt::format("{} warning{} below", warnings->size(), warnings->size() == 1 ? "" : "s"));
  }
  if (!poor.empty()) {
    v.level = Verdict::Level::kPoor;
    v.headline = "The fit is poor: do not use these numbers as they stand";
    v.reasons = poor;
    v.reasons.insert(v.reasons.end(), caution.begin(), caution.end());
  } else if (!caution.empty()) {
    v.level = Verdict::Level::kCaution;
    v.headline = "The fit looks sound, with points to check";
    v.reasons = caution;
  } else {
    v.level = Verdict::Level::kSound;
    v.headline = "The fit looks sound";
    v.reasons.push_back(fmt::format("converged; rms {} px; residuals white; no flags", rms ? Plain(*rms, 3) : "?"));
  }
  return v;
}

std::string HtmlReport(const ReportData& data) {
  const json& r = data.results;
  const TimeAxis time{Number(r, "inputs.capture_fps").value_or(0.0)};
  std::string session = "results";
  if (const json* files = Find(r, "inputs.files"); files && files->is_array() && !files->empty()) {
    session = (*files)[0].get<std::string>();
  }
  std::string html = "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>Flight report: " +
                     H(session) + "</title>\n<style>" + kStyle + "</style>\n</head>\n<body>\n";
  html += "<h1>Flight report: " + H(session) + "</h1>\n<p class=\"sub\">" + H(Text(r, "tool.name")) + " " +
          H(Text(r, "tool.version")) + " &middot; " + H(Text(r, "fit.model")) + "</p>\n";
  const Verdict verdict = AssessFit(data);
  const char* level = verdict.level == Verdict::Level::kPoor      ? "poor"
                      : verdict.level == Verdict::Level::kCaution ? "caution"
                                                                  : "sound";
  html += fmt::format("<div class=\"verdict {}\" id=\"verdict\"><h2>{}</h2><ul>", level, H(verdict.headline));
  for (const std::string& reason : verdict.reasons) html += "<li>" + H(reason) + "</li>";
  html += "</ul></div>\n";
  if (const json* warnings = Find(r, "warnings"); warnings && warnings->is_array() && !warnings->empty()) {
    html += "<h2>Warnings</h2>\n<ul class=\"warnings\">\n";
    for (const json& w : *warnings) html += "<li>" + H(w.get<std::string>()) + "</li>\n";
    html += "</ul>\n";
  }
  html += "<h2>Results</h2>\n" + HeadlineTable(data);
  html += "<h2>The body and its CM</h2>\n" + BodyDrawing(data);
  html += "<h2>Fit and data</h2>\n<div class=\"grid\">\n" + ImagePlanePlots(data) + CmPathPlot(data) +
          ResidualsPerFramePlot(data, time) + ResidualsPerMarkerPlot(data) + "</div>\n";
  html += "<h2>Rotation and conservation checks</h2>\n<div class=\"grid\">\n" + SpinPlot(data, time) +
          ConservationPlots(data, time) + AccelerationPlot(data, time) + "</div>\n";
  html += "<h2>Free-flight window and diagnostics</h2>\n" + WindowAndDiagnostics(data);
  html += "<h2>Method</h2>\n" + std::string(kMethod);
  if (const std::string noise = Text(data.results, "fit.noise_model.sentence"); !noise.empty()) {
    html += "<p><b>This fit's noise.</b> " + H(noise) + "</p>\n";
  }
  html += "<h2>Inputs and provenance</h2>\n" + ProvenanceSection(data);
  html += "</body>\n</html>\n";
  return html;
}

void WriteHtmlReport(const std::filesystem::path& dir) {
  const std::string html = HtmlReport(ReadReportData(dir));
  WriteFileAtomically(dir / "report.html", [&](std::ostream& out) { out << html; });
}

}  // namespace tumbletrace
