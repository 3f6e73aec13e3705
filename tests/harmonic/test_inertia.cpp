// Centre of mass and inertia tensor against closed forms: a diatomic has the moment μr²
// about any axis through its centre of mass perpendicular to the bond (μ the reduced mass)
// and none about the bond; an equilateral triangle of equal masses m at distance d from
// its centre has the in-plane moments ½·3md² and the out-of-plane moment 3md²
// (perpendicular-axis theorem). Moments do not change under rotation and translation.
#include <gtest/gtest.h>

#include <Eigen/Geometry>
#include <cmath>

#include "core/units.hpp"
#include "harmonic/inertia.hpp"

namespace overtone {
namespace {

// Sums of a few products of numbers of order 1–100: round-off only.
constexpr double kMomentTolerance = 1e-10;  // Da·Å²

TEST(Inertia, DiatomicHasTheReducedMassMoment) {
  const double m1 = 1.007825, m2 = 34.968853, r = 1.2746;  // H³⁵Cl masses (Da) and bond (Å), from memory
  Eigen::VectorXd x(6);
  x << 0.3, -0.2, 1.0, 0.3, -0.2, 1.0 + r;  // bond along z, off the origin
  const Eigen::Vector2d masses(m1, m2);
  const Eigen::Vector3d center = center_of_mass(x, masses);
  EXPECT_NEAR(center.z(), 1.0 + m2 * r / (m1 + m2), kMomentTolerance);
  const Eigen::Matrix3d inertia = inertia_tensor(x, masses);
  const double mu = m1 * m2 / (m1 + m2);
  EXPECT_NEAR(inertia(0, 0), mu * r * r, kMomentTolerance);
  EXPECT_NEAR(inertia(1, 1), mu * r * r, kMomentTolerance);
  EXPECT_NEAR(inertia(2, 2), 0.0, kMomentTolerance);
  EXPECT_NEAR(inertia(0, 1), 0.0, kMomentTolerance);
}

TEST(Inertia, TriangleMomentsAreInvariantUnderRotationAndTranslation) {
  const double m = 18.998403, d = 1.31;  // equal masses (Da) at distance d (Å) from the centre
  Eigen::VectorXd x(9);
  for (int k = 0; k < 3; ++k) {
    const double angle = 2.0 * units::pi * k / 3.0;
    x.segment<3>(3 * k) = Eigen::Vector3d(d * std::cos(angle), d * std::sin(angle), 0.0);
  }
  const Eigen::Vector3d masses = Eigen::Vector3d::Constant(m);
  const Eigen::Vector3d expected(1.5 * m * d * d, 1.5 * m * d * d, 3.0 * m * d * d);
  const Eigen::Matrix3d turn =
      Eigen::AngleAxisd(0.9, Eigen::Vector3d(1, -2, 0.5).normalized()).toRotationMatrix();
  Eigen::VectorXd moved(9);
  for (int k = 0; k < 3; ++k)
    moved.segment<3>(3 * k) = turn * x.segment<3>(3 * k) + Eigen::Vector3d(2.0, -1.0, 4.0);
  for (const Eigen::VectorXd* geometry : {&x, &moved}) {
    const Eigen::Vector3d moments =
        Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d>(inertia_tensor(*geometry, masses)).eigenvalues();
    EXPECT_LT((moments - expected).cwiseAbs().maxCoeff(), kMomentTolerance);
  }
}

}  // namespace
}  // namespace overtone
