// k-d tree over planar points; see point_index.hpp. nanoflann 1.4: radius search takes the squared
// radius, and the index type of the result must match the tree's (uint32_t here).
#include "hallway/geometry/point_index.hpp"

#include <nanoflann.hpp>
#include <stdexcept>

namespace hallway::geometry {
namespace {

struct Cloud {
  std::vector<Point> pts;
  std::size_t kdtree_get_point_count() const { return pts.size(); }
  double kdtree_get_pt(std::size_t i, std::size_t dim) const { return dim == 0 ? pts[i].x : pts[i].y; }
  template <class Box>
  bool kdtree_get_bbox(Box&) const {
    return false;
  }
};

using Tree = nanoflann::KDTreeSingleIndexAdaptor<nanoflann::L2_Simple_Adaptor<double, Cloud>, Cloud, 2, std::uint32_t>;

}  // namespace

struct PointIndex::Impl {
  Cloud cloud;
  std::unique_ptr<Tree> tree;
};

PointIndex::PointIndex(std::vector<Point> points) : impl_(std::make_unique<Impl>()) {
  if (points.size() > 0xFFFFFFF0u) throw std::length_error("PointIndex: too many points");
  impl_->cloud.pts = std::move(points);
  impl_->tree = std::make_unique<Tree>(2, impl_->cloud, nanoflann::KDTreeSingleIndexAdaptorParams(10));
  impl_->tree->buildIndex();
}

PointIndex::~PointIndex() = default;

std::size_t PointIndex::size() const {
  return impl_->cloud.pts.size();
}
const Point& PointIndex::point(std::size_t i) const {
  return impl_->cloud.pts.at(i);
}

std::size_t PointIndex::Nearest(Point q) const {
  if (size() == 0) throw std::logic_error("PointIndex::Nearest on an empty set");
  const double query[2] = {q.x, q.y};
  std::uint32_t index = 0;
  double dist2 = 0.0;
  impl_->tree->knnSearch(query, 1, &index, &dist2);
  return index;
}

std::vector<std::size_t> PointIndex::Within(Point q, double r) const {
  const double query[2] = {q.x, q.y};
  std::vector<std::pair<std::uint32_t, double>> found;
  impl_->tree->radiusSearch(query, r * r, found, nanoflann::SearchParams(32, 0.0f, true));
  std::vector<std::size_t> out;
  out.reserve(found.size());
  for (const auto& f : found) out.push_back(f.first);
  return out;
}

}  // namespace hallway::geometry
