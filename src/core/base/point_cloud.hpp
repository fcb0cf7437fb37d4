// nanoflann's view of a row-major array of points, and a factory that builds a k-d tree of a
// fixed dimension (1 to 8; nanoflann then keeps its per-query buffers on the stack) or of a
// dimension known only at run time. Shared by every nearest-neighbour search of the core.
#pragma once

#include <cstddef>
#include <cstdint>
#include <memory>

namespace tessera {

struct PointCloud {
  const double* data = nullptr;
  std::size_t count = 0;
  std::size_t dims = 0;

  std::size_t kdtree_get_point_count() const { return count; }
  double kdtree_get_pt(std::uint32_t idx, std::size_t dim) const { return data[idx * dims + dim]; }
  template <class Box>
  bool kdtree_get_bbox(Box&) const {
    return false;  // let nanoflann compute the bounding box
  }
};

// Squared Euclidean distance in the summation order of nanoflann's L2_Simple_Adaptor, so that a
// linear scan and a tree search agree bit for bit.
inline double squared_distance(const double* a, const double* b, std::size_t dims) {
  double result = 0.0;
  for (std::size_t i = 0; i < dims; ++i) {
    const double diff = a[i] - b[i];
    result += diff * diff;
  }
  return result;
}

// TreeOf<Dim> derives from Base and is constructible from a PointCloud; Dim = -1 is dynamic.
template <template <int> class TreeOf, class Base>
std::unique_ptr<Base> make_tree_for_dimension(PointCloud cloud) {
  switch (cloud.dims) {
    case 1:
      return std::make_unique<TreeOf<1>>(cloud);
    case 2:
      return std::make_unique<TreeOf<2>>(cloud);
    case 3:
      return std::make_unique<TreeOf<3>>(cloud);
    case 4:
      return std::make_unique<TreeOf<4>>(cloud);
    case 5:
      return std::make_unique<TreeOf<5>>(cloud);
    case 6:
      return std::make_unique<TreeOf<6>>(cloud);
    case 7:
      return std::make_unique<TreeOf<7>>(cloud);
    case 8:
      return std::make_unique<TreeOf<8>>(cloud);
    default:
      return std::make_unique<TreeOf<-1>>(cloud);
  }
}

}  // namespace tessera
