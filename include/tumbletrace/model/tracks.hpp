// tracks.csv: one row per detection in a track (docs/files.md)
//   frame,time_s,track,marker,x_px,y_px,quality[,camera]
// `marker` is the body marker id, empty while unidentified. The optional last column
// `camera` is the index of the camera in the session's list (0 when absent); track ids are
// per camera.
#pragma once

#include <filesystem>
#include <optional>
#include <vector>

namespace tumbletrace {

struct TrackPoint {
  int frame = 0;
  double time_s = 0.0;
  int track = 0;
  std::optional<int> marker;
  double x_px = 0.0;
  double y_px = 0.0;
  double quality = 1.0;  // 0..1; 0: kept in its track for continuity, left out of the fit
  double sigma_px = 0.0; // the detector's 1-sigma of the centre (0: unknown; not in the file)
  double radius_px = 0.0; // the detector's radius of the blob (0: unknown; not in the file)
  bool outline_fitted = false;  // the radius is a fitted outline's (not in the file)
  int source_line = 0;   // line in the file it was read from (0: not read from a file)
  int camera = 0;        // index of the camera in the session's list
};

// Throws InputError naming the file, the line and the column on malformed rows. The header
// decides whether the camera column is there; it is written when a point has camera != 0.
std::vector<TrackPoint> ReadTracksCsv(const std::filesystem::path& path);
void WriteTracksCsv(const std::vector<TrackPoint>& points, const std::filesystem::path& path);

}  // namespace tumbletrace
