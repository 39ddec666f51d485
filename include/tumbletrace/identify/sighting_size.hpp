// A sighting smaller or larger than its marker's image in that frame: what is left of a
// marker mostly hidden behind the body or cut by its edge, the lit part of a sphere in the
// body's shadow, two blobs merged. The detector alone cannot tell such a sliver
// from a smaller marker, and the tracker's running median cannot either when the track
// never saw the marker whole. Once the tracks are identified, the other markers seen in
// the same frame say how large this one should look: for marker m,
//
//   expected_m = median over the other identified sightings j with a fitted outline of
//                r_j x d_m / d_j                      (r: image radius, d: diameter)
//
// (markers of one clip lie at nearly one depth; a tool 0.45 m long seen from 2 m changes
// its markers' scale by about +-11 %). A sighting with r < min_share x expected_m (a part
// of the marker) or r > max_share x expected_m (a marker merged with something else) is
// kept in its track with quality 0, which the fit leaves out; it is written so to
// tracks.csv. On ten of the imaging study's shaded throws (tests/study), the centre error
// of the sightings the detector kept, by r / expected: whole markers 0.24 px rms in
// 1.0-1.1, 0.36 px in 0.9-1.0, 0.55 px in 0.8-0.9; markers cut or in shadow 1.06 px in
// 0.8-0.9, 1.5 px in 0.7-0.8, 2.2-2.9 px below; merged blobs above 1.2, 1.7-1.9 px.
#pragma once

#include <vector>

#include "tumbletrace/model/body.hpp"
#include "tumbletrace/model/tracks.hpp"

namespace tumbletrace {

struct SightingSizeOptions {
  double min_share = 0.88;  // of the expected radius
  double max_share = 1.2;  // beyond it: a marker merged with another or with the body's
                           // lit edge, whose centre is neither's
  int min_references = 2;  // other outline sightings in the frame needed to judge
};

struct SightingSizeReport {
  int judged = 0;  // sightings with enough references
  int marked = 0;  // of them, set to quality 0 here
};

// Sets quality 0 on identified points of `points` too small or too large for their marker
// (points without a radius or a marker id are left alone).
SightingSizeReport MarkOffSizeSightings(std::vector<TrackPoint>* points, const Body& body,
                                        const SightingSizeOptions& options = {});

}  // namespace tumbletrace
