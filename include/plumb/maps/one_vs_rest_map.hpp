#pragma once
// One-vs-rest (Zadrozny and Elkan 2002): class k's probability p_k (on the
// probability scale the row's value over the row's sum, exactly the value
// when the row sums to 1; on the logit scale softmax of the logits) is mapped by a binary plumb map fitted on the indicator
// "the label is class k" (rows weighted as read), and each row's K mapped
// values are divided by their sum. A row whose mapped values are all 0 gets
// 1/K for every class (counted in the fit's notes when a fit row does).
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "plumb/class_map.hpp"

namespace plumb {

class OneVsRestMap final : public ClassCalibrationMap {
 public:
  OneVsRestMap(std::vector<std::string> classes, ClassScale scale, std::string per_class,
               std::vector<std::unique_ptr<CalibrationMap>> maps);

  static std::unique_ptr<ClassCalibrationMap> fit(const ClassScores& data, const ClassMapOptions& options);
  static std::unique_ptr<ClassCalibrationMap> load(std::vector<std::string> classes, ClassScale scale,
                                                   const nlohmann::json& parameters, const std::string& where);

  std::string_view kind() const noexcept override { return "one_vs_rest"; }
  bool map(const double* in, double* out) const noexcept override;
  nlohmann::json parameters() const override;

  const std::string& per_class() const noexcept { return per_class_; }
  // Class k's binary map (on the probability scale).
  const CalibrationMap& class_map(std::size_t k) const noexcept { return *maps_[k]; }

 private:
  std::string per_class_;
  std::vector<std::unique_ptr<CalibrationMap>> maps_;
};

}  // namespace plumb
