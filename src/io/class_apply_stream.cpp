#include "plumb/io/class_apply_stream.hpp"

#include <condition_variable>
#include <deque>
#include <exception>
#include <map>
#include <mutex>
#include <optional>
#include <thread>

#include "plumb/error.hpp"
#include "plumb/io/class_input.hpp"

namespace plumb::io {
namespace {

// A block of records as the reading thread copied them: every byte in
// `bytes`, each record's parts as offsets into it.
struct Block {
  std::string bytes;
  struct Rec {
    std::size_t raw_at, raw_len, end_at, end_len;
    std::uint64_t line;
    std::size_t fields_at;  // index into `field` of its K fields
  };
  std::vector<Rec> recs;
  std::vector<std::pair<std::size_t, std::size_t>> field;  // offset, length in bytes
  std::exception_ptr read_error;  // the reader's refusal after the last record (ends the stream)
};

struct Done {
  std::string text;
  ClassApplyCounts counts;
  std::exception_ptr error;  // the block's first bad record
};

std::string quoted(const std::string& text, char delimiter) {
  if (text.find_first_of(std::string{delimiter, '"', '\n', '\r'}) == std::string::npos) return text;
  std::string out = "\"";
  for (char c : text) {
    if (c == '"') out += '"';
    out += c;
  }
  return out + "\"";
}

class Worker {
 public:
  Worker(const CsvReader& reader, const ClassCalibrationMap& map, const ClassApplyOptions& o)
      : reader_(reader), map_(map), o_(o), k_(map.k()), values_(k_), q_(k_) {
    for (const std::string& c : map.classes()) class_text_.push_back(quoted(c, reader.delimiter()));
  }

  Done run(const Block& b) {
    Done d;
    const char delim = reader_.delimiter();
    try {
      for (const Block::Rec& r : b.recs) {
        bool missing = false;
        for (std::size_t j = 0; j < k_; ++j) {
          const auto [at, len] = b.field[r.fields_at + j];
          const std::string_view s(b.bytes.data() + at, len);
          const std::optional<double> v = parse_number(s);
          if (v) {
            values_[j] = *v;
            continue;
          }
          if (!is_missing_value(s)) {
            const bool logit = map_.scale() == ClassScale::logit;
            throw Error(ErrorKind::input, std::string(logit ? "the logit " : "the score ") + std::string(number_problem(s)),
                        where(r, j), std::string(s), logit ? "a finite decimal number" : "a decimal number in [0, 1]");
          }
          if (o_.missing == MissingPolicy::refuse)
            throw Error(ErrorKind::input, "the score is missing", where(r, j), std::string(s), missing_score_expected);
          missing = true;
        }
        if (missing && o_.missing == MissingPolicy::skip) {
          ++d.counts.skipped;
          continue;
        }
        d.text.append(b.bytes, r.raw_at, r.raw_len);
        if (missing) {
          for (std::size_t j = 0; j < k_; ++j) d.text += delim;
          if (o_.argmax) d.text += delim;
          ++d.counts.missing;
        } else {
          if (const auto p = class_row_problem(values_.data(), k_, map_.scale(), o_.sum_tolerance)) {
            const auto [at, len] = b.field[r.fields_at + p->column];
            throw Error(ErrorKind::input, p->message, where(r, p->column), std::string(b.bytes.data() + at, len),
                        p->expected);
          }
          if (map_.map(values_.data(), q_.data())) ++d.counts.clipped;
          std::size_t best = 0;
          for (std::size_t j = 0; j < k_; ++j) {
            d.text += delim;
            char buf[32];
            d.text.append(buf, probability_text(buf, buf + sizeof buf, q_[j], o_.digits));
            if (q_[j] > q_[best]) best = j;
          }
          if (o_.argmax) {
            d.text += delim;
            d.text += class_text_[best];
          }
        }
        d.text.append(b.bytes, r.end_at, r.end_len);
        ++d.counts.rows;
      }
    } catch (...) {
      d.error = std::current_exception();
    }
    return d;
  }

 private:
  Location where(const Block::Rec& r, std::size_t j) const {
    Location loc;
    loc.file = reader_.name();
    loc.line = r.line;
    loc.column = o_.score_columns[j] + 1;
    loc.column_name = reader_.header()[o_.score_columns[j]];
    return loc;
  }
  const CsvReader& reader_;
  const ClassCalibrationMap& map_;
  const ClassApplyOptions& o_;
  std::size_t k_;
  std::vector<double> values_, q_;
  std::vector<std::string> class_text_;
};

}  // namespace

ClassApplyCounts class_apply_stream(CsvReader& reader, const ClassCalibrationMap& map, OutputFile& out,
                                    const ClassApplyOptions& o, const ApplyProgress& progress) {
  if (o.score_columns.size() != map.k())
    throw Error(ErrorKind::internal, "class_apply_stream: one score column per class is needed");
  const std::size_t k = map.k();
  ClassApplyCounts total;

  // Reading: the next block, or an empty one at the end.
  Record record;
  bool ended = false;
  auto read_block = [&](Block& b) {
    b.bytes.clear();
    b.recs.clear();
    b.field.clear();
    b.read_error = nullptr;
    try {
      while (b.recs.size() < o.block_rows && reader.next(record)) {
        Block::Rec r;
        r.raw_at = b.bytes.size();
        r.raw_len = record.raw.size();
        b.bytes.append(record.raw);
        r.end_at = b.bytes.size();
        r.end_len = record.line_end.size();
        b.bytes.append(record.line_end);
        r.line = record.line;
        r.fields_at = b.field.size();
        for (std::size_t j = 0; j < k; ++j) {
          const std::string_view f = record.fields[o.score_columns[j]];
          b.field.emplace_back(b.bytes.size(), f.size());
          b.bytes.append(f);
        }
        b.recs.push_back(r);
      }
      if (b.recs.size() < o.block_rows) ended = true;
    } catch (...) {
      b.read_error = std::current_exception();
      ended = true;
    }
  };
  auto write_done = [&](Done& d) {
    out.write(d.text);
    total.rows += d.counts.rows;
    total.clipped += d.counts.clipped;
    total.missing += d.counts.missing;
    total.skipped += d.counts.skipped;
    if (d.error) std::rethrow_exception(d.error);
  };

  if (o.threads <= 1) {
    Worker worker(reader, map, o);
    Block b;
    while (!ended) {
      read_block(b);
      Done d = worker.run(b);
      write_done(d);
      if (b.read_error) std::rethrow_exception(b.read_error);
      if (progress) progress(total.rows + total.skipped, reader.bytes_read(), reader.total_bytes());
    }
    return total;
  }

  // Several threads: blocks numbered in input order; workers take the next
  // waiting block and leave its result; the calling thread writes results in
  // order. At most 2 * threads blocks are read ahead.
  std::mutex mutex;
  std::condition_variable changed;
  std::deque<std::pair<std::uint64_t, std::shared_ptr<Block>>> waiting;
  std::map<std::uint64_t, Done> finished;
  bool stop = false;
  std::vector<std::thread> pool;
  for (unsigned t = 0; t < o.threads; ++t)
    pool.emplace_back([&] {
      Worker worker(reader, map, o);
      for (;;) {
        std::pair<std::uint64_t, std::shared_ptr<Block>> job;
        {
          std::unique_lock lock(mutex);
          changed.wait(lock, [&] { return stop || !waiting.empty(); });
          if (waiting.empty()) return;
          job = std::move(waiting.front());
          waiting.pop_front();
        }
        Done d = worker.run(*job.second);
        {
          std::lock_guard lock(mutex);
          finished.emplace(job.first, std::move(d));
        }
        changed.notify_all();
      }
    });
  auto end_pool = [&] {
    {
      std::lock_guard lock(mutex);
      stop = true;
      waiting.clear();
    }
    changed.notify_all();
    for (std::thread& t : pool) t.join();
    pool.clear();
  };

  std::uint64_t next_read = 0, next_write = 0;
  std::map<std::uint64_t, std::exception_ptr> read_error_after;
  const std::uint64_t ahead = 2 * static_cast<std::uint64_t>(o.threads);
  try {
    for (;;) {
      // Write every finished block that is next in order.
      for (;;) {
        Done d;
        {
          std::unique_lock lock(mutex);
          if (!ended && next_read - next_write < ahead) break;  // room to read more
          if (next_write == next_read) break;
          changed.wait(lock, [&] { return finished.count(next_write) > 0; });
          d = std::move(finished[next_write]);
          finished.erase(next_write);
        }
        write_done(d);
        if (const auto it = read_error_after.find(next_write); it != read_error_after.end())
          std::rethrow_exception(it->second);
        ++next_write;
        if (progress) progress(total.rows + total.skipped, reader.bytes_read(), reader.total_bytes());
      }
      if (ended && next_write == next_read) break;
      if (ended) continue;
      auto b = std::make_shared<Block>();
      read_block(*b);
      if (b->read_error) read_error_after[next_read] = b->read_error;
      {
        std::lock_guard lock(mutex);
        waiting.emplace_back(next_read, std::move(b));
      }
      ++next_read;
      changed.notify_all();
    }
  } catch (...) {
    end_pool();
    throw;
  }
  end_pool();
  return total;
}

}  // namespace plumb::io
