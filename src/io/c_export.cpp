#include "plumb/io/c_export.hpp"

#include <charconv>
#include <cmath>
#include <vector>

#include "plumb/error.hpp"
#include "plumb/maps/beta_map.hpp"
#include "plumb/maps/class_scaling_map.hpp"
#include "plumb/maps/one_vs_rest_map.hpp"
#include "plumb/maps/centered_isotonic_map.hpp"
#include "plumb/maps/fold_average_map.hpp"
#include "plumb/maps/histogram_map.hpp"
#include "plumb/maps/isotonic_map.hpp"
#include "plumb/maps/platt_map.hpp"
#include "plumb/maps/temperature_map.hpp"
#include "plumb/scale.hpp"

namespace plumb::io {
namespace {

// A C double literal that reads back as the same double.
std::string num(double x) {
  char text[64];
  const auto [end, ec] = std::to_chars(text, text + sizeof text, x);
  std::string s(text, ec == std::errc{} ? end : text);
  if (s.find_first_of(".en") == std::string::npos) s += ".0";
  return s[0] == '-' ? "(" + s + ")" : s;
}

bool is_identifier(const std::string& name) {
  if (name.empty() || (name[0] >= '0' && name[0] <= '9')) return false;
  for (char c : name)
    if (!((c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') || c == '_')) return false;
  return true;
}

std::string array(const std::string& name, std::size_t n, auto value) {
  std::string out = "static const double " + name + "[" + std::to_string(n) + "] = {";
  for (std::size_t i = 0; i < n; ++i) out += (i % 4 == 0 ? "\n    " : " ") + num(value(i)) + (i + 1 < n ? "," : "");
  return out + "\n};\n";
}

class Writer {
 public:
  explicit Writer(std::string prefix) : prefix_(std::move(prefix)) {}

  // Defines a static function PREFIX_mapN(double score) for `map` (score
  // already valid) in `code` and returns its name.
  std::string function(const CalibrationMap& map) {
    const std::string name = prefix_ + "_map" + std::to_string(++made_);
    std::string body;
    if (const auto* m = dynamic_cast<const PlattMap*>(&map)) {
      body = "  const double f = " + std::string(map.scale() == Scale::probability ? logit() : "score") +
             ";\n  return " + sigmoid() + "(-(" + num(m->a()) + " * f + " + num(m->b()) + "));\n";
    } else if (const auto* m = dynamic_cast<const TemperatureMap*>(&map)) {
      body = "  const double z = " + std::string(map.scale() == Scale::probability ? logit() : "score") +
             ";\n  return " + sigmoid() + "(z / " + num(m->temperature()) + ");\n";
    } else if (const auto* m = dynamic_cast<const BetaMap*>(&map)) {
      body = "  const double s = " + clip() + "(score);\n  return " + sigmoid() + "(" + num(m->a()) +
             " * log(s) - " + num(m->b()) + " * log1p(-s) + " + num(m->c()) + ");\n";
    } else if (const auto* m = dynamic_cast<const IsotonicMap*>(&map)) {
      const auto& b = m->blocks();
      const bool linear = map.parameters().at("between_blocks") == "linear";
      const std::size_t n = b.size();
      code += array(name + "_lo", n, [&](std::size_t i) { return b[i].score_lo; });
      code += array(name + "_hi", n, [&](std::size_t i) { return b[i].score_hi; });
      code += array(name + "_value", n, [&](std::size_t i) { return b[i].value; });
      const std::string lo = name + "_lo", hi = name + "_hi", value = name + "_value", last = std::to_string(n - 1);
      body = "  if (score < " + lo + "[0]) return " + value + "[0];\n" +
             "  if (score > " + hi + "[" + last + "]) return " + value + "[" + last + "];\n" +
             "  /* the last block starting at or before the score */\n"
             "  unsigned long i = 0, n = " + std::to_string(n) + ";\n"
             "  while (n > 1) {\n"
             "    const unsigned long half = n / 2;\n"
             "    if (" + lo + "[i + half] <= score) i += half;\n"
             "    n -= half;\n"
             "  }\n";
      if (!linear) {
        body += "  return " + value + "[i];\n";
      } else {
        body += "  if (score <= " + hi + "[i]) return " + value + "[i];\n"
                "  const double l = " + value + "[i], r = " + value + "[i + 1];\n"
                "  const double gap = " + lo + "[i + 1] - " + hi + "[i];\n"
                "  const double t = isfinite(gap) ? (score - " + hi + "[i]) / gap\n"
                "                                 : (0.5 * score - 0.5 * " + hi + "[i]) / (0.5 * " + lo +
                "[i + 1] - 0.5 * " + hi + "[i]);\n"
                "  const double p = l + t * (r - l);\n"
                "  return p < l ? l : r < p ? r : p;\n";
      }
    } else if (const auto* m = dynamic_cast<const CenteredIsotonicMap*>(&map)) {
      body = centered(name, *m);
    } else if (const auto* m = dynamic_cast<const HistogramMap*>(&map)) {
      const auto& bins = m->bins();
      const auto& upper = m->boundaries();
      code += array(name + "_value", bins.size(), [&](std::size_t i) { return bins[i].value; });
      if (upper.empty()) {
        body = "  (void)score;\n  return " + name + "_value[0];\n";
      } else {
        code += array(name + "_upper", upper.size(), [&](std::size_t i) { return upper[i]; });
        body = "  /* the first bin whose boundary is at or above the score */\n"
               "  unsigned long first = 0, count = " + std::to_string(upper.size()) + ";\n"
               "  while (count > 0) {\n"
               "    const unsigned long step = count / 2;\n"
               "    if (" + name + "_upper[first + step] < score) {\n"
               "      first += step + 1;\n"
               "      count -= step + 1;\n"
               "    } else {\n"
               "      count = step;\n"
               "    }\n"
               "  }\n"
               "  return " + name + "_value[first];\n";
      }
    } else if (const auto* m = dynamic_cast<const FoldAverageMap*>(&map)) {
      std::vector<std::string> folds;
      for (const auto& fold : m->maps()) folds.push_back(function(*fold));
      body = "  double sum = 0.0;\n";
      for (const std::string& f : folds) body += "  sum += " + f + "(score);\n";
      body += "  return sum / " + num(static_cast<double>(folds.size())) + ";\n";
    } else {
      throw Error(ErrorKind::usage, "no C form for " + kind_with_article(map.kind()) + " map", {},
                  std::string(map.kind()), "platt, temperature, beta, isotonic, centered_isotonic, histogram or fold_average");
    }
    code += "static double " + name + "(double score) {\n" + body + "}\n\n";
    return name;
  }

  std::string code;
  bool uses_clip = false, uses_logit = false, uses_sigmoid = false;

 private:
  // CenteredIsotonicMap::line and map: the line through the points, ends
  // held, then the strict form's minimal slope.
  std::string centered(const std::string& name, const CenteredIsotonicMap& m) {
    const auto& x = m.point_score();
    const auto& y = m.point_value();
    const std::size_t n = x.size();
    code += array(name + "_x", n, [&](std::size_t i) { return x[i]; });
    code += array(name + "_y", n, [&](std::size_t i) { return y[i]; });
    const std::string px = name + "_x", py = name + "_y", last = std::to_string(n - 1);
    std::string body = "  double p;\n"
                       "  if (!(score > " + px + "[0])) {\n    p = " + py + "[0];\n"
                       "  } else if (!(score < " + px + "[" + last + "])) {\n    p = " + py + "[" + last + "];\n"
                       "  } else {\n"
                       "    /* the last point at or below the score */\n"
                       "    unsigned long i = 0, n = " + std::to_string(n) + ";\n"
                       "    while (n > 1) {\n"
                       "      const unsigned long half = n / 2;\n"
                       "      if (" + px + "[i + half] <= score) i += half;\n"
                       "      n -= half;\n"
                       "    }\n"
                       "    const double l = " + py + "[i], r = " + py + "[i + 1];\n"
                       "    const double gap = " + px + "[i + 1] - " + px + "[i];\n"
                       "    const double t = isfinite(gap) ? (score - " + px + "[i]) / gap\n"
                       "                                   : (0.5 * score - 0.5 * " + px + "[i]) / (0.5 * " + px +
                       "[i + 1] - 0.5 * " + px + "[i]);\n"
                       "    const double rise = r - l;\n"
                       "    const double q = isfinite(rise) ? l + t * rise : l + 2.0 * (t * (0.5 * r - 0.5 * l));\n"
                       "    p = q < l ? l : r < q ? r : q;\n"
                       "  }\n";
    if (m.strict()) {
      body += "  {\n"
              "    const double t = 0.5 + 0.5 * tanh((0.5 * score - " + num(0.5 * m.middle()) + ") / " +
              num(0.5 * m.half_width()) + ");\n"
              "    const double q = " + num(1.0 - m.tilt()) + " * p + " + num(m.tilt()) + " * t;\n"
              "    p = q < 0.0 ? 0.0 : 1.0 < q ? 1.0 : q;\n"
              "  }\n";
    }
    return body + "  return p;\n";
  }
  std::string clip() {
    uses_clip = true;
    return prefix_ + "_clip";
  }
  std::string logit() {
    uses_clip = uses_logit = true;
    return prefix_ + "_logit(score)";
  }
  std::string sigmoid() {
    uses_sigmoid = true;
    return prefix_ + "_sigmoid";
  }

  std::string prefix_;
  int made_ = 0;
};

// plumb's clipping and logistic function (include/plumb/scale.hpp), when
// the writer's functions used them.
std::string helpers(const Writer& w, const std::string& name) {
  std::string out;
  if (w.uses_clip)
    out += "static double " + name + "_clip(double p) {\n"
           "  if (p < " + num(probability_clip) + ") p = " + num(probability_clip) + ";\n"
           "  if (p > " + num(1.0 - probability_clip) + ") p = " + num(1.0 - probability_clip) + ";\n"
           "  return p;\n}\n\n";
  if (w.uses_logit)
    out += "static double " + name + "_logit(double p) {\n"
           "  const double q = " + name + "_clip(p);\n"
           "  return log(q) - log1p(-q);\n}\n\n";
  if (w.uses_sigmoid)
    out += "static double " + name + "_sigmoid(double x) {\n"
           "  if (x >= 0) return 1.0 / (1.0 + exp(-x));\n"
           "  const double e = exp(x);\n"
           "  return e / (1.0 + e);\n}\n\n";
  return out;
}

void check_identifier(const std::string& name) {
  if (!is_identifier(name))
    throw Error(ErrorKind::usage, "the function name is not a C identifier", {}, name,
                "letters, digits and underscores, not starting with a digit");
}

// The note names files and columns: "*/" in it would end the comment.
std::string comment_safe(std::string note) {
  for (std::size_t at; (at = note.find("*/")) != std::string::npos;) note.replace(at, 2, "* /");
  return note;
}

}  // namespace

std::string c_export(const CalibrationMap& map, const CExportOptions& options) {
  const std::string& name = options.function_name;
  check_identifier(name);
  Writer w(name);
  const std::string top = w.function(map);
  const bool probability = map.scale() == Scale::probability;
  const std::string note =
      comment_safe(options.source_note.empty() ? kind_with_article(map.kind()) + " map" : options.source_note);
  std::string out = "/* plumb: " + note +
                    ", on " + std::string(to_string(map.scale())) + " scores.\n"
                    " * " + name + "(score) returns the probability plumb apply gives, bit for bit when built with\n"
                    " * the same C library, without -ffast-math and without fused multiply-add contraction\n"
                    " * (-ffp-contract=off). NaN for a score apply refuses (" +
                    (probability ? "outside [0, 1], not a number" : "infinite, not a number") + "). */\n"
                    "#include <math.h>\n\n";
  out += helpers(w, name);
  out += w.code;
  out += "double " + name + "(double score);\n\n";
  out += "double " + name + "(double score) {\n";
  out += probability ? "  if (!(score >= 0.0 && score <= 1.0)) return NAN;\n"
                     : "  if (!isfinite(score)) return NAN;\n";
  out += "  return " + top + "(score);\n}\n";
  return out;
}

std::string class_c_export(const ClassCalibrationMap& map, const ClassCExportOptions& options) {
  const std::string& name = options.function_name;
  check_identifier(name);
  if (!(options.sum_tolerance >= 0.0 && std::isfinite(options.sum_tolerance)))
    throw Error(ErrorKind::usage, "the sum tolerance is negative or not finite", {}, num(options.sum_tolerance),
                "a finite number >= 0");
  const std::size_t k = map.k();
  const std::string ks = std::to_string(k);
  const bool probability = map.scale() == ClassScale::probability;
  Writer w(name);
  std::string tables, body;
  // The row's K values as apply refuses them (class_row_problem).
  body += "  unsigned long j;\n";
  if (probability) {
    body += "  double total = 0.0;\n"
            "  for (j = 0; j < " + ks + "; ++j) {\n"
            "    if (!(score[j] >= 0.0 && score[j] <= 1.0)) goto refused;\n"
            "    total += score[j];\n"
            "  }\n"
            "  if (!(fabs(total - 1.0) <= " + num(options.sum_tolerance) + ")) goto refused;\n";
  } else {
    body += "  for (j = 0; j < " + ks + "; ++j)\n"
            "    if (!isfinite(score[j])) goto refused;\n";
  }
  if (const auto* m = dynamic_cast<const ClassScalingMap*>(&map)) {
    // log_probabilities (src/core/class_map.cpp), then the linear part, then softmax.
    body += "  {\n    double l[" + ks + "], eta[" + ks + "], top, sum;\n";
    if (probability) {
      body += "    double ls;\n"
              "    sum = 0.0;\n"
              "    for (j = 0; j < " + ks + "; ++j) {\n"
              "      double p = score[j];\n"
              "      if (p < " + num(class_probability_floor) + ") p = " + num(class_probability_floor) + ";\n"
              "      sum += p;\n"
              "      l[j] = log(p);\n"
              "    }\n"
              "    ls = log(sum);\n"
              "    for (j = 0; j < " + ks + "; ++j) l[j] -= ls;\n";
    } else {
      body += "    double lse;\n"
              "    top = score[0];\n"
              "    for (j = 1; j < " + ks + "; ++j) if (top < score[j]) top = score[j];\n"
              "    sum = 0.0;\n"
              "    for (j = 0; j < " + ks + "; ++j) sum += exp(score[j] - top);\n"
              "    lse = top + log(sum);\n"
              "    for (j = 0; j < " + ks + "; ++j) l[j] = score[j] - lse;\n";
    }
    if (m->form() == ClassScalingMap::Form::temperature) {
      body += "    for (j = 0; j < " + ks + "; ++j) eta[j] = l[j] / " + num(m->temperature()) + ";\n";
    } else {
      const auto& a = m->matrix();
      const auto& b = m->bias();
      tables += array(name + "_bias", k, [&](std::size_t i) { return b[i]; });
      if (m->form() == ClassScalingMap::Form::vector) {
        tables += array(name + "_scale", k, [&](std::size_t i) { return a[i * k + i]; });
        body += "    for (j = 0; j < " + ks + "; ++j) eta[j] = " + name + "_scale[j] * l[j] + " + name +
                "_bias[j];\n";
      } else {
        tables += array(name + "_matrix", k * k, [&](std::size_t i) { return a[i]; });
        body += "    unsigned long c;\n"
                "    for (c = 0; c < " + ks + "; ++c) {\n"
                "      double s = 0.0;\n"
                "      for (j = 0; j < " + ks + "; ++j) s += " + name + "_matrix[c * " + ks + " + j] * l[j];\n"
                "      eta[c] = s + " + name + "_bias[c];\n"
                "    }\n";
      }
    }
    // softmax (src/core/class_map.cpp): the largest value taken out first.
    body += "    top = eta[0];\n"
            "    for (j = 1; j < " + ks + "; ++j) if (top < eta[j]) top = eta[j];\n"
            "    sum = 0.0;\n"
            "    for (j = 0; j < " + ks + "; ++j) {\n"
            "      out[j] = exp(eta[j] - top);\n"
            "      sum += out[j];\n"
            "    }\n"
            "    for (j = 0; j < " + ks + "; ++j) out[j] /= sum;\n"
            "  }\n";
  } else if (const auto* m = dynamic_cast<const OneVsRestMap*>(&map)) {
    // row_probabilities, each class's binary map, renormalise
    // (src/core/maps/one_vs_rest_map.cpp).
    std::vector<std::string> per;
    for (std::size_t j = 0; j < k; ++j) per.push_back(w.function(m->class_map(j)));
    body += "  {\n    double p[" + ks + "], sum = 0.0;\n";
    if (probability) {
      body += "    for (j = 0; j < " + ks + "; ++j) sum += score[j];\n"
              "    for (j = 0; j < " + ks + "; ++j) p[j] = score[j] / sum;\n";
    } else {
      body += "    double top = score[0];\n"
              "    for (j = 1; j < " + ks + "; ++j) if (top < score[j]) top = score[j];\n"
              "    for (j = 0; j < " + ks + "; ++j) {\n"
              "      p[j] = exp(score[j] - top);\n"
              "      sum += p[j];\n"
              "    }\n"
              "    for (j = 0; j < " + ks + "; ++j) p[j] /= sum;\n";
    }
    for (std::size_t j = 0; j < k; ++j)
      body += "    out[" + std::to_string(j) + "] = " + per[j] + "(p[" + std::to_string(j) + "]);\n";
    body += "    sum = 0.0;\n"
            "    for (j = 0; j < " + ks + "; ++j) sum += out[j];\n"
            "    if (!(sum > 0.0)) {\n"
            "      for (j = 0; j < " + ks + "; ++j) out[j] = 1.0 / " + num(static_cast<double>(k)) + ";\n"
            "    } else {\n"
            "      for (j = 0; j < " + ks + "; ++j) out[j] /= sum;\n"
            "    }\n"
            "  }\n";
  } else {
    throw Error(ErrorKind::usage, "no C form for " + kind_with_article(map.kind()) + " map", {},
                std::string(map.kind()), "temperature, vector, dirichlet or one_vs_rest");
  }
  body += "  return 0;\n"
          "refused:\n"
          "  for (j = 0; j < " + ks + "; ++j) out[j] = NAN;\n"
          "  return 1;\n";
  std::string classes;
  for (std::size_t j = 0; j < k; ++j) classes += (j ? ", " : "") + map.classes()[j];
  const std::string note =
      comment_safe(options.source_note.empty() ? kind_with_article(map.kind()) + " map" : options.source_note);
  std::string out =
      "/* plumb: " + note + ", on " + std::string(to_string(map.scale())) + " scores of " + ks +
      " classes\n * (" + comment_safe(classes) + ", in this order).\n"
      " * " + name + "(score, out) reads the row's " + ks + " scores and writes the " + ks +
      " probabilities plumb apply gives,\n"
      " * bit for bit when built with the same C library, without -ffast-math and without fused\n"
      " * multiply-add contraction (-ffp-contract=off). It returns 0, or 1 with NaN in every out[j] for a\n"
      " * row apply refuses (" +
      (probability ? "a value outside [0, 1] or not a number, or a sum further than " + num(options.sum_tolerance) +
                         " from 1"
                   : "a logit infinite or not a number") +
      "). */\n"
      "#include <math.h>\n\n";
  out += helpers(w, name);
  out += tables.empty() ? "" : tables + "\n";
  out += w.code;
  out += "int " + name + "(const double score[" + ks + "], double out[" + ks + "]);\n\n";
  out += "int " + name + "(const double score[" + ks + "], double out[" + ks + "]) {\n" + body + "}\n";
  return out;
}

}  // namespace plumb::io
