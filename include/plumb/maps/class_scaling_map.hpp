#pragma once
// The three multi-class kinds that end in a softmax of a linear function of
// the row's log-probabilities l (plumb/class_map.hpp):
//   temperature: q = softmax(l / T);
//   vector:      q = softmax(a .* l + b);
//   dirichlet:   q = softmax(W l + b), L2 on W's off-diagonal and on b.
// Each fit minimises the weighted mean log loss (plus the dirichlet penalty)
// by Newton's method with a backtracking line search, starting from the
// identity map (T = 1; a = 1, b = 0; W = I, b = 0). The objective is convex
// in the parameters (a softmax regression), so a stationary point is the
// minimum; when the rows are separable it has none, and the fit stops at
// max_class_newton_steps with converged = false and a note.
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "plumb/class_map.hpp"

namespace plumb {

inline constexpr int max_class_newton_steps = 200;

class ClassScalingMap final : public ClassCalibrationMap {
 public:
  enum class Form { temperature, vector, dirichlet };
  // `matrix` is K x K row-major (for vector: diag(a)); for temperature it is
  // the one value T.
  ClassScalingMap(Form form, std::vector<std::string> classes, ClassScale scale, std::vector<double> matrix,
                  std::vector<double> bias, double l2);

  static std::unique_ptr<ClassCalibrationMap> fit(Form form, const ClassScores& data, const ClassMapOptions& options);
  static std::unique_ptr<ClassCalibrationMap> load(Form form, std::vector<std::string> classes, ClassScale scale,
                                                   const nlohmann::json& parameters, const std::string& where);

  std::string_view kind() const noexcept override;
  bool map(const double* in, double* out) const noexcept override;
  nlohmann::json parameters() const override;

  Form form() const noexcept { return form_; }
  double temperature() const noexcept { return matrix_[0]; }
  const std::vector<double>& matrix() const noexcept { return matrix_; }
  const std::vector<double>& bias() const noexcept { return bias_; }
  double l2() const noexcept { return l2_; }

 private:
  Form form_;
  std::vector<double> matrix_, bias_;
  double l2_ = 0.0;
};

}  // namespace plumb
