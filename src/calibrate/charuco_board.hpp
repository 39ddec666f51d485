// The ChArUco board of a target through OpenCV 4.6 contrib's aruco module (the API before
// 4.7: cv::aruco::CharucoBoard::create, interpolateCornersCharuco).
#pragma once

#include <opencv2/aruco/charuco.hpp>
#include <string>
#include <vector>

#include "tumbletrace/calibrate/target.hpp"

namespace tumbletrace {

bool CharucoDictionaryKnown(const std::string& name);
std::string CharucoDictionaryNames();  // for messages
int CharucoDictionarySize(const std::string& name);  // markers in the dictionary
cv::Ptr<cv::aruco::CharucoBoard> MakeCharucoBoard(const CalibrationTarget& target);
// The black squares (those without a marker) and every black cell of every marker
// (border and bits), in the board frame, metres.
std::vector<std::vector<Eigen::Vector2d>> CharucoBlackPolygons(const CalibrationTarget& target);

}  // namespace tumbletrace
