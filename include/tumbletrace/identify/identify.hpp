// Identification: which body marker each track is, from the rigid geometry of the marker
// layout alone (no coded markers).
//
// 1. Anchor: on a frame where most tracks are present, every injective assignment of
//    (up to 7 of) its tracks to the body's markers is tried; each is scored by the
//    reprojection rms of the PnP pose it implies, and rejected when it turns a flat dot
//    away from the camera. A partial assignment of 4 or more tracks whose own pose leaves
//    more squared error than the whole may have is not completed (9 markers and 7 tracks
//    are 181440 assignments: 100 s in all, about 1 s so).
// 2. Verification: the surviving assignments are scored again on up to 15 further frames
//    spread over the tracks' shared life (median of the per-frame rms).
// 3. Choice and ambiguity: every assignment that scores nearly as well as the best (below
//    3 x best + 0.5 px) is grown (step 4) to the other tracks, and the grown labellings
//    are compared on the frames where they differ, with all their markers: four anchor
//    tracks admit wrong assignments that the other markers rule out, and a marker hidden
//    in most verification frames is judged where it is seen. The best over the clip wins;
//    when a different labelling fits the frames where they differ within 1.5 x its rms +
//    0.02 px, the layout cannot be told apart from its own symmetric copy in these views:
//    identification refuses, naming the markers that swap.
// 4. Growth: poses of the frames with at least 4 identified markers label the remaining
//    tracks by their median distance to each marker's projection (a marker that reappears
//    after an occlusion, a track that started later); tracks that match no marker (glints)
//    stay unidentified and are reported.
#pragma once

#include <map>
#include <string>
#include <vector>

#include "tumbletrace/model/body.hpp"
#include "tumbletrace/model/camera.hpp"
#include "tumbletrace/model/tracks.hpp"

namespace tumbletrace {

struct IdentifyOptions {
  int max_anchor_tracks = 7;           // tracks enumerated on the anchor frame
  int verification_frames = 15;
  double accept_rms_px = 3.0;          // largest per-frame rms of a plausible assignment
  double label_distance_px = 2.5;      // largest median distance to label a further track
  int min_markers = 4;                 // identified markers a frame needs for a pose
};

struct IdentifyReport {
  std::map<int, int> marker_of_track;  // track -> marker id
  std::vector<int> unidentified_tracks;
  double anchor_rms_px = 0.0;          // score of the chosen assignment
  double runner_up_rms_px = 0.0;       // score of the best different assignment compared
                                       // with it and refused (0: none)
  std::vector<std::string> warnings;
};

// Fills `marker` of every identified track point. Throws DataError when no frame shows
// enough tracks, when no assignment fits, or when the layout is ambiguous (naming the
// markers that cannot be told apart).
IdentifyReport IdentifyTracks(std::vector<TrackPoint>* points, const Body& body,
                              const Camera& camera, const IdentifyOptions& options = {});

}  // namespace tumbletrace
