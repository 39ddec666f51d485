// Where free flight starts and ends in a clip: the frames after release and before the
// catch, the bounce or the floor, found from the data.
//
// Criterion (docs/method.md, "The free-flight window"):
// 1. a core of the middle frames is fitted with the full model;
// 2. the window grows outwards in chunks while each new chunk agrees with the model refitted
//    with it: the chunk's squared residuals, in units of the fit's noise (each sighting's
//    capped at 25, so one misidentified marker cannot stop the growth), sum to no more
//    than 4 standard deviations above their expected chi-square, or their mean is no more
//    than twice the noise variance (compressed video leaves residuals correlated in time,
//    whose chi-square exceeds the independent-noise bound without any break; a break
//    worth cutting raises the residuals well above the noise within a few frames); a
//    refused chunk is halved and tried again down to the smallest chunk;
// 3. at an end where a chunk was refused, the break is located by a change-point scan over
//    the frames around it: for each candidate last free frame b, the frames up to b are
//    scored against the model and the frames after it against the model plus a rigid
//    deviation (a jump of CM velocity and of angular velocity, and a constant extra
//    acceleration of each, from the break on, 12 parameters); the b with the least total
//    is the break, and the candidates within 1 of that least form its 68 %
//    profile-likelihood interval (common practice for change points).
// A window the user gives is used as given.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "tumbletrace/fit/free_flight_fit.hpp"
#include "tumbletrace/fit/observations.hpp"
#include "tumbletrace/model/body.hpp"
#include "tumbletrace/model/camera.hpp"

namespace tumbletrace {

struct WindowEnd {
  int frame = 0;               // first (start) or last (end) free-flight frame
  double sigma_frames = 0.0;   // half-width of the 68 % interval, frames
  bool clip_edge = false;      // free flight runs to the clip's first or last frame
  bool velocity_jump = false;  // the break is a jump of velocity (impact, catch), not a
                               // smooth departure (a hand still pushing, a contact)
  double excess_chi2 = 0.0;    // the refused chunk's chi-square above expectation, sigmas
  std::string sentence;        // what happened there, in words
};

struct FreeFlightWindow {
  bool detected = false;       // false: the user's window (or the whole clip) was used
  WindowEnd start, end;
  int fits = 0;                // model fits the search took
  std::string criterion;
};

struct WindowSearchOptions {
  double core_fraction = 0.4;     // of the frames with sightings, in the middle
  int min_chunk_frames = 8;
  double chunk_fraction = 0.25;   // of the current window
  double refuse_sigma = 4.0;      // a chunk's chi-square excess that stops the growth ...
  double refuse_variance_ratio = 2.0;  // ... when its mean also exceeds this (noise units)
  // ... and its rms exceeds the noise by more than this, px: a misfit below it is at the
  // level of the camera model's own accuracy (a calibration's reprojection rms is 0.05-0.3 px,
  // common practice), not a contact. Found on a clip fitted with a calibrated camera
  // (0.05 px noise, 0.065 px rms over the first frames: a "release" that was not there).
  double refuse_excess_px = 0.05;
  double capped_chi2 = 25.0;      // per sighting, in noise units
  int scan_inside_frames = 10;    // frames inside the grown window the scan reconsiders
  int scan_outside_frames = 15;   // frames beyond it
  int min_outside_frames = 4;     // the deviation's frames at the least
};

// Finds the window. `fit_options` are those of the final fit (its first/last_frame are
// ignored here). Throws DataError when even the core cannot be fitted.
FreeFlightWindow FindFreeFlightWindow(const std::vector<FrameSightings>& frames, const Body& body,
                                      const std::vector<Camera>& cameras,
                                      const FitOptions& fit_options,
                                      const WindowSearchOptions& options = {});

}  // namespace tumbletrace
