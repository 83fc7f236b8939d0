#include "plumb/class_report.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <exception>
#include <thread>

#include "core/metric_input.hpp"
#include "plumb/error.hpp"
#include "plumb/number_text.hpp"
#include "plumb/scale.hpp"

namespace plumb {
namespace {

// Below this many rows per bin the report says a table is thin (common
// practice: about 10 per bin for a stable observed frequency), as the binary
// report does.
constexpr double cases_per_bin = 10.0;

void check_input(const ClassScores& s, const ClassReportOptions& o) {
  const std::size_t K = s.k();
  if (K < 2) throw Error(ErrorKind::internal, "build_class_report: fewer than two classes");
  if (s.values.size() != s.rows * K)
    throw Error(ErrorKind::internal, "build_class_report: values are not rows x classes");
  if (s.label.size() != s.rows) throw Error(ErrorKind::internal, "build_class_report: the rows are not labelled");
  if (!s.weight.empty() && s.weight.size() != s.rows)
    throw Error(ErrorKind::internal, "build_class_report: weights differ in length from the rows");
  for (std::size_t r = 0; r < s.rows; ++r) {
    if (s.label[r] >= K) throw Error(ErrorKind::internal, "build_class_report: a label is not a class index");
    if (!s.weight.empty() && !(std::isfinite(s.weight[r]) && s.weight[r] >= 0.0))
      throw Error(ErrorKind::internal, "build_class_report: a weight is negative or not finite");
  }
  for (double v : s.values) {
    const bool ok = s.scale == ClassScale::probability ? (v >= 0.0 && v <= 1.0) : std::isfinite(v);
    if (!ok) throw Error(ErrorKind::internal, "build_class_report: a score is out of range for its scale");
  }
  if (o.bins == 0) throw Error(ErrorKind::usage, "the number of bins must be positive", {}, "0", "1 or more");
  if (o.bins > 65535) throw Error(ErrorKind::usage, "too many bins", {}, std::to_string(o.bins), "at most 65535");
  if (!(o.confidence > 0.0 && o.confidence < 1.0))
    throw Error(ErrorKind::usage, "the confidence level must lie strictly between 0 and 1", {},
                std::to_string(o.confidence), "a value such as 0.95");
}

// Row-major probabilities: the values themselves, or their softmax per row.
std::vector<double> probabilities(const ClassScores& s) {
  if (s.scale == ClassScale::probability) return s.values;
  const std::size_t K = s.k();
  std::vector<double> p(s.values.size());
  for (std::size_t r = 0; r < s.rows; ++r) {
    const double* z = s.row(r);
    const double top = *std::max_element(z, z + K);
    double sum = 0.0;
    for (std::size_t k = 0; k < K; ++k) sum += p[r * K + k] = std::exp(z[k] - top);
    for (std::size_t k = 0; k < K; ++k) p[r * K + k] /= sum;
  }
  return p;
}

// The first class of the largest probability.
std::size_t top_label(const double* p, std::size_t K) noexcept {
  std::size_t best = 0;
  for (std::size_t k = 1; k < K; ++k)
    if (p[k] > p[best]) best = k;
  return best;
}

double brier_term(const double* p, std::size_t K, std::size_t label) noexcept {
  double sum = 0.0;
  for (std::size_t k = 0; k < K; ++k) {
    const double d = p[k] - (k == label ? 1.0 : 0.0);
    sum += d * d;
  }
  return sum;
}

double log_term(double p_label) noexcept { return -std::log(std::max(p_label, probability_clip)); }

std::vector<double> histogram(std::span<const double> f, std::span<const double> w, std::size_t bins) {
  std::vector<double> h(bins, 0.0);
  if (bins == 0) return h;
  for (std::size_t i = 0; i < f.size(); ++i)
    h[std::min(bins - 1, static_cast<std::size_t>(f[i] * static_cast<double>(bins)))] += detail::weight_at(w, i);
  return h;
}

// Poisson(1) counts of 32-bit uniforms (poisson1_of_u32, bootstrap.hpp)
// looked up by their leading 16 bits: the count when every uniform with
// those bits inverts to it (255 when they straddle a step of the
// distribution function, about one prefix in 10^4), so a draw costs one table
// read and gives the same count as poisson1_of_u32.
struct Poisson1Prefix {
  std::vector<std::uint8_t> count;
  Poisson1Prefix() : count(std::size_t{1} << 16) {
    for (std::uint32_t j = 0; j < count.size(); ++j) {
      const std::uint64_t lo = poisson1_of_u32(j << 16), hi = poisson1_of_u32((j << 16) | 0xFFFFu);
      count[j] = lo == hi && lo < 255 ? static_cast<std::uint8_t>(lo) : 255;
    }
  }
  double operator()(std::uint32_t u) const {
    const std::uint8_t k = count[u >> 16];
    return static_cast<double>(k != 255 ? k : poisson1_of_u32(u));
  }
};

// Each replicate of the Poisson bootstrap: every row's weight times one
// Poisson(1) count (bootstrap.hpp: replicate r's generator, one 64-bit draw
// per pair of rows in row order, its high half for the even row and its low
// half for the odd one, poisson1_of_u32); every figure recomputed on the
// reweighted rows, the ECEs over equal-width bins (which do not move with
// the weights).
//
// An ECE over fixed bins is sum_b |F_b - Y_b| / W (F_b and Y_b the bin's
// weighted sums of forecast and label, W the total weight), so a replicate
// needs one signed sum per bin: each row adds w (p - y) to its top label's
// bin and, per class k, w (p_k - 1{label = k}) to class k's bin. The rows
// are laid out once, column by column: the five totals' terms (weight,
// Brier, log loss, right, confidence, each times the weight), the K + 1
// signed terms and their slots among the replicate's sums (the top label's
// B bins, then B per class).
ClassBootstrapResult bootstrap_class_report(const std::vector<double>& p, const ClassScores& s,
                                            const std::vector<double>& conf, const std::vector<double>& correct,
                                            const std::vector<double>& brier, const std::vector<double>& loss,
                                            const ClassReportOptions& o) {
  const std::size_t n = s.rows, K = s.k(), B = o.bins, R = o.bootstrap;
  constexpr std::size_t totals = 5;
  std::vector<std::vector<double>> term(totals, std::vector<double>(n));
  std::vector<std::vector<double>> gap(K + 1, std::vector<double>(n));
  std::vector<std::vector<std::uint32_t>> slot(K + 1, std::vector<std::uint32_t>(n));
  for (std::size_t i = 0; i < n; ++i) {
    const double w = detail::weight_at(s.weight, i);
    term[0][i] = w;
    term[1][i] = w * brier[i];
    term[2][i] = w * loss[i];
    term[3][i] = w * correct[i];
    term[4][i] = w * conf[i];
    gap[0][i] = w * (conf[i] - correct[i]);
    slot[0][i] = equal_width_bin(conf[i], B);
    for (std::size_t k = 0; k < K; ++k) {
      const double pk = p[i * K + k];
      gap[1 + k][i] = w * (pk - (s.label[i] == k ? 1.0 : 0.0));
      slot[1 + k][i] = static_cast<std::uint32_t>(B + k * B + equal_width_bin(pk, B));
    }
  }
  const Poisson1Prefix draw;
  std::vector<double> v_brier(R), v_loss(R), v_acc(R), v_gap(R), v_top(R), v_class(R);
  // One replicate's running state: its generator, its totals and its
  // signed sums per slot, each in four copies (lanes) so that the adds of a
  // block are independent chains; the copies are summed at the end.
  constexpr std::size_t lanes = 4;
  struct Replicate {
    std::mt19937_64 gen;
    double total[totals][lanes] = {};
    std::vector<double> sums;
  };
  constexpr std::size_t block = 1024;  // a multiple of 2 * lanes
  // Adds rows [from, to) to one replicate, drawing their counts in row order.
  const auto add_rows = [&](Replicate& rep, std::size_t from, std::size_t to, double* t) {
    const std::size_t m = to - from;
    for (std::size_t i = 0; i < m; i += 2) {
      const std::uint64_t u = rep.gen();
      t[i] = draw(static_cast<std::uint32_t>(u >> 32));
      t[i + 1] = draw(static_cast<std::uint32_t>(u));  // past the last row when m is odd: never read
    }
    const std::size_t full = m - m % lanes;
    for (std::size_t j = 0; j < totals; ++j) {
      const double* x = term[j].data() + from;
      double acc[lanes];
      for (std::size_t l = 0; l < lanes; ++l) acc[l] = rep.total[j][l];
      for (std::size_t i = 0; i < full; i += lanes)
        for (std::size_t l = 0; l < lanes; ++l) acc[l] += t[i + l] * x[i + l];
      for (std::size_t i = full; i < m; ++i) acc[i % lanes] += t[i] * x[i];
      for (std::size_t l = 0; l < lanes; ++l) rep.total[j][l] = acc[l];
    }
    // Row i adds to copy i % lanes of the sums: consecutive rows mostly
    // fall in one bin, and one copy would make every add wait for the last.
    // The K + 1 columns are taken row by row, so their adds overlap too.
    double* sums = rep.sums.data();
    const std::size_t S = B + K * B;
    for (std::size_t i = 0; i < m; i += lanes) {
      const std::size_t end = std::min(m, i + lanes);
      for (std::size_t c = 0; c <= K; ++c) {
        const double* d = gap[c].data() + from;
        const std::uint32_t* q = slot[c].data() + from;
        for (std::size_t j = i; j < end; ++j) sums[(j - i) * S + q[j]] += t[j] * d[j];
      }
    }
  };
  const auto finish = [&](std::size_t r, const Replicate& rep) {
    double total[totals];
    for (std::size_t j = 0; j < totals; ++j)
      total[j] = (rep.total[j][0] + rep.total[j][1]) + (rep.total[j][2] + rep.total[j][3]);
    const double W = total[0];
    if (!(W > 0.0)) {
      v_brier[r] = v_loss[r] = v_acc[r] = v_gap[r] = v_top[r] = v_class[r] = std::nan("");
      return;
    }
    v_brier[r] = total[1] / W;
    v_loss[r] = total[2] / W;
    v_acc[r] = total[3] / W;
    v_gap[r] = total[4] / W - total[3] / W;
    const std::size_t S = B + K * B;
    const auto ece_of = [&](std::size_t first) {
      double e = 0.0;
      for (std::size_t b = 0; b < B; ++b) {
        const double* x = rep.sums.data() + first + b;
        e += std::abs((x[0] + x[S]) + (x[2 * S] + x[3 * S]));
      }
      return e / W;
    };
    v_top[r] = ece_of(0);
    double mean = 0.0;
    for (std::size_t k = 0; k < K; ++k) mean += ece_of(B + k * B);
    v_class[r] = mean / static_cast<double>(K);
  };
  std::size_t threads = o.threads == 0 ? std::max(1u, std::thread::hardware_concurrency()) : o.threads;
  threads = std::min(threads, R);
  std::vector<std::exception_ptr> errors(threads);
  // Thread t runs replicates t, t + threads, ...; it walks the rows once, a
  // block at a time, and runs each of its replicates over the block while
  // the block is in cache. Each replicate still draws and adds its rows in
  // row order, so the numbers are those of one replicate at a time.
  const auto worker = [&](std::size_t t) {
    try {
      std::vector<Replicate> mine;
      for (std::size_t r = t; r < R; r += threads) {
        mine.push_back(Replicate{bootstrap_generator(o.seed, r), {}, {}});
        mine.back().sums.assign(lanes * (B + K * B), 0.0);
      }
      std::vector<double> counts(block);
      for (std::size_t from = 0; from < n; from += block)
        for (Replicate& rep : mine) add_rows(rep, from, std::min(n, from + block), counts.data());
      for (std::size_t j = 0; j < mine.size(); ++j) finish(t + j * threads, mine[j]);
    } catch (...) {
      errors[t] = std::current_exception();
    }
  };
  if (threads <= 1) {
    worker(0);
  } else {
    std::vector<std::thread> pool;
    for (std::size_t t = 0; t < threads; ++t) pool.emplace_back(worker, t);
    for (std::thread& th : pool) th.join();
  }
  for (const std::exception_ptr& e : errors)
    if (e) std::rethrow_exception(e);
  ClassBootstrapResult out;
  out.brier = bootstrap_percentile_interval(std::move(v_brier), o.confidence);
  out.log_loss = bootstrap_percentile_interval(std::move(v_loss), o.confidence);
  out.accuracy = bootstrap_percentile_interval(std::move(v_acc), o.confidence);
  out.confidence_gap = bootstrap_percentile_interval(std::move(v_gap), o.confidence);
  out.top_label_ece = bootstrap_percentile_interval(std::move(v_top), o.confidence);
  out.classwise_ece = bootstrap_percentile_interval(std::move(v_class), o.confidence);
  return out;
}

std::string count_word(double weight) { return weight_text(weight); }

void add_cautions(ClassReport& r) {
  const double thin = cases_per_bin * static_cast<double>(r.options.bins);
  const double right = r.accuracy * r.weight;
  const double rarer = std::min(right, r.weight - right);
  if (rarer < thin)
    r.cautions.push_back("top label: " + count_word(rarer) + " rows of the rarer outcome (right or wrong) for " +
                         std::to_string(r.options.bins) +
                         " bins; observed accuracies per bin are noisy (common practice: about 10 per bin) - "
                         "consider fewer bins (--bins)");
  std::vector<std::string> empty, few;
  for (const ClassSummary& c : r.classes) {
    if (c.rows == 0 || !(c.weight > 0.0))
      empty.push_back("'" + c.name + "'");
    else if (c.weight < thin)
      few.push_back("'" + c.name + "' (" + count_word(c.weight) + ")");
  }
  const auto join = [](const std::vector<std::string>& v) {
    std::string s;
    for (std::size_t i = 0; i < v.size(); ++i) s += (i ? ", " : "") + v[i];
    return s;
  };
  if (!empty.empty())
    r.cautions.push_back("no row is labelled with class " + join(empty) +
                         ": its one-vs-rest figures only measure the probability it is given, and the class-wise "
                         "ECE still counts it (its ECE is its mean forecast)");
  if (!few.empty())
    r.cautions.push_back("few rows for " + std::to_string(r.options.bins) + " bins in class " + join(few) +
                         "; its reliability table is noisy (common practice: about 10 per bin) - consider fewer "
                         "bins (--bins)");
  if (r.true_class_at_zero > 0)
    r.cautions.push_back(count_text(r.true_class_at_zero) +
                         " rows give their own label a probability of 0; the log loss counts each as about 27.6 "
                         "nats (clipped at 1e-12)");
}

}  // namespace

ClassReport build_class_report(const ClassScores& s, const ClassReportOptions& o) {
  check_input(s, o);
  const std::size_t n = s.rows, K = s.k();
  const std::vector<double> p = probabilities(s);
  const std::span<const double> w = s.weight;

  ClassReport r;
  r.options = o;
  r.scale = s.scale;
  r.rows = n;

  // Per row: confidence, whether the top label is right, and the two scores.
  std::vector<double> conf(n), correct(n), brier(n), loss(n);
  double W = 0.0, sb = 0.0, sl = 0.0, sa = 0.0, sc = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    const double* row = p.data() + i * K;
    const std::size_t y = s.label[i];
    const std::size_t top = top_label(row, K);
    conf[i] = row[top];
    correct[i] = top == y ? 1.0 : 0.0;
    brier[i] = brier_term(row, K, y);
    loss[i] = log_term(row[y]);
    if (row[y] == 0.0) ++r.true_class_at_zero;
    const double wi = detail::weight_at(w, i);
    W += wi;
    sb += wi * brier[i];
    sl += wi * loss[i];
    sa += wi * correct[i];
    sc += wi * conf[i];
  }
  detail::require_positive_total("report", W);
  r.weight = W;
  r.brier = sb / W;
  r.log_loss = sl / W;
  r.accuracy = sa / W;
  r.mean_confidence = sc / W;
  r.confidence_gap = r.mean_confidence - r.accuracy;

  // Top label: the binary machinery on (confidence, right).
  {
    const Binning width = make_binning(conf, w, BinningKind::equal_width, o.bins);
    const std::vector<BinSums> width_sums = bin_sums(conf, correct, w, width);
    const Binning mass = make_binning(conf, w, BinningKind::equal_mass, o.bins);
    const std::vector<BinSums> mass_sums = bin_sums(conf, correct, w, mass);
    r.top_label_equal_width = calibration_error(width_sums, BinningKind::equal_width);
    r.top_label_equal_mass = calibration_error(mass_sums, BinningKind::equal_mass);
    const bool by_mass = o.binning == BinningKind::equal_mass;
    r.top_label_table = reliability_table(by_mass ? mass : width, by_mass ? mass_sums : width_sums, o.confidence);
    r.top_label_pav = pav_fit(conf, correct, w);
    r.confidence_histogram = histogram(conf, w, o.histogram_bins);
    if (o.bootstrap > 0) {
      BootstrapOptions b;
      b.replicates = o.bootstrap;
      b.threads = o.threads;
      b.seed = o.seed;
      b.confidence = o.confidence;
      b.binning = o.binning;
      b.bins = o.bins;
      r.top_label_band = consistency_band(conf, w, by_mass ? mass : width, b);
    }
  }

  // Each class one-vs-rest.
  {
    std::vector<double> pk(n), yk(n);
    double width_total = 0.0, mass_total = 0.0;
    for (std::size_t k = 0; k < K; ++k) {
      ClassSummary c;
      c.name = s.classes[k];
      double forecast = 0.0;
      for (std::size_t i = 0; i < n; ++i) {
        pk[i] = p[i * K + k];
        yk[i] = s.label[i] == k ? 1.0 : 0.0;
        const double wi = detail::weight_at(w, i);
        if (s.label[i] == k) {
          ++c.rows;
          c.weight += wi;
        }
        forecast += wi * pk[i];
      }
      c.observed_rate = c.weight / W;
      c.mean_forecast = forecast / W;
      c.calibration_in_the_large = c.mean_forecast - c.observed_rate;
      c.ece_equal_width = calibration_error(pk, yk, w, BinningKind::equal_width, o.bins);
      c.ece_equal_mass = calibration_error(pk, yk, w, BinningKind::equal_mass, o.bins);
      c.table = reliability_table(pk, yk, w, o.binning, o.bins, o.confidence);
      c.histogram = histogram(pk, w, o.histogram_bins);
      width_total += c.ece_equal_width.ece;
      mass_total += c.ece_equal_mass.ece;
      r.classes.push_back(std::move(c));
    }
    r.classwise_ece_equal_width = width_total / static_cast<double>(K);
    r.classwise_ece_equal_mass = mass_total / static_cast<double>(K);
  }

  if (o.bootstrap > 0) r.bootstrap = bootstrap_class_report(p, s, conf, correct, brier, loss, o);
  add_cautions(r);
  return r;
}

namespace {

constexpr std::array<GateMetric, 8> class_gate_table{{
    {"brier", true, false, "Brier score summed over classes"},
    {"log_loss", true, false, "log loss of the label's probability, nats"},
    {"top_label_ece", true, false, "top-label ECE, equal-width bins"},
    {"top_label_ece_mass", true, false, "top-label ECE, equal-mass bins"},
    {"classwise_ece", true, false, "class-wise ECE, equal-width bins"},
    {"classwise_ece_mass", true, false, "class-wise ECE, equal-mass bins"},
    {"confidence_gap", true, true, "mean confidence - accuracy, signed"},
    {"accuracy", false, true, "share of rows whose top label is right"},
}};

}  // namespace

bool ClassReport::any_gate_exceeded() const noexcept {
  return std::any_of(gates.begin(), gates.end(), [](const GateResult& g) { return g.exceeded; });
}

std::span<const GateMetric> class_gate_metrics() noexcept { return class_gate_table; }

const GateMetric* find_class_gate_metric(std::string_view name) noexcept {
  for (const GateMetric& m : class_gate_table)
    if (m.name == name) return &m;
  return nullptr;
}

double class_gate_value(const ClassReport& r, std::string_view metric) {
  if (metric == "brier") return r.brier;
  if (metric == "log_loss") return r.log_loss;
  if (metric == "top_label_ece") return r.top_label_equal_width.ece;
  if (metric == "top_label_ece_mass") return r.top_label_equal_mass.ece;
  if (metric == "classwise_ece") return r.classwise_ece_equal_width;
  if (metric == "classwise_ece_mass") return r.classwise_ece_equal_mass;
  if (metric == "confidence_gap") return r.confidence_gap;
  if (metric == "accuracy") return r.accuracy;
  throw Error(ErrorKind::internal, "class_gate_value: unknown metric " + std::string(metric));
}

GateResult check_class_gate(const Gate& g, const ClassReport& r) {
  GateResult result{g, {}, class_gate_value(r, g.metric), false};
  result.exceeded = g.bound == GateBound::max ? !(result.value <= g.limit) : !(result.value >= g.limit);
  return result;
}

}  // namespace plumb
