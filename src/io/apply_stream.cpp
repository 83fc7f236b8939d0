#include "plumb/io/apply_stream.hpp"

#include <charconv>
#include <cmath>
#include <condition_variable>
#include <cstring>
#include <deque>
#include <exception>
#include <memory>
#include <mutex>
#include <thread>
#include <vector>

#include "io/csv_errors.hpp"
#include "plumb/error.hpp"
#include "plumb/io/labelled_input.hpp"
#include "plumb/scale.hpp"

#if defined(__SSE2__)
#include <emmintrin.h>
#endif

namespace plumb::io {
namespace {

// What stopped a block: the first bad record in it.
struct Failure {
  enum class Kind { none, ragged, nul, score } kind = Kind::none;
  std::uint64_t line = 0;
  std::size_t column = 0;  // 1-based (nul)
  std::size_t fields = 0;  // (ragged)
  std::string value;       // the score text (score)
};

// The text of recently written probabilities, by their bits and the text
// rule (digits). Formatting is the costliest step per row; a
// piecewise-constant map (isotonic within its blocks, histogram) writes a
// few values over and over, and a hit copies the same bytes
// probability_text() would write.
class ProbabilityText {
 public:
  ProbabilityText() : entries_(std::size_t{1} << bits_) {}
  char* write(char* w, double p, int digits) {
    std::uint64_t key;
    std::memcpy(&key, &p, sizeof key);
    Entry& e = entries_[(key * 0x9E3779B97F4A7C15ull) >> (64 - bits_)];
    if (e.key != key || e.digits != digits) {
      e.key = key;
      e.digits = digits;
      e.length = static_cast<std::uint8_t>(probability_text(e.text, e.text + sizeof e.text, p, digits) - e.text);
    }
    std::memcpy(w, e.text, sizeof e.text);  // the caller has room for a whole entry
    return w + e.length;
  }

 private:
  static constexpr int bits_ = 12;
  struct Entry {
    std::uint64_t key = ~std::uint64_t{0};  // a NaN's bits: no probability has them
    int digits = 0;
    char text[32];
    std::uint8_t length = 0;
  };
  std::vector<Entry> entries_;
};

// One block of whole records and what became of it.
struct Block {
  std::string in;  // the records with their line ends, as read
  std::uint64_t first_line = 0;
  // Records read by CsvReader::next() (blocks with quotes): where each lies
  // in `in`, and its score field unescaped into `scores`.
  // field_offset and field_length: the score field's bytes as stored
  // (quotes included) within the record, for --replace.
  struct Parsed {
    std::size_t raw_offset, raw_length, end_length, score_offset, score_length, field_offset, field_length;
    std::uint64_t line;
  };
  bool parsed = false;
  std::vector<Parsed> records;
  std::string scores;

  std::string out;
  std::size_t out_size = 0;
  ProbabilityText text;  // kept from block to block: it depends on nothing else
  ApplyCounts counts;
  Failure failure;
  std::exception_ptr crash;  // anything but a Failure (out of memory)
  // An error met while reading the records after this block's; raised once
  // the block itself has been checked, so that errors come in input order.
  std::exception_ptr read_error;
  bool done = false;

  void reset() {
    in.clear();
    records.clear();
    scores.clear();
    parsed = false;
    out_size = 0;
    counts = {};
    failure = {};
    crash = nullptr;
    read_error = nullptr;
    done = false;
  }
};

// Parses and maps blocks; shared read-only by the workers.
class Mapper {
 public:
  // Room for a record of `raw` bytes and its new field at `w`, growing the
  // block's output (and moving `w`) when needed.
  static void reserve(Block& block, char*& w, std::size_t raw) {
    const std::size_t used = static_cast<std::size_t>(w - block.out.data());
    const std::size_t need = used + raw + 128;
    if (need <= block.out.size()) return;
    block.out.resize(std::max(need, block.out.size() + block.out.size() / 2));
    w = block.out.data() + used;
  }

  Mapper(const CalibrationMap& map, const ApplyStreamOptions& o, char delimiter, std::size_t fields)
      : map_(map), scale_(map.scale()), o_(o), delimiter_(delimiter), fields_(fields) {}

  void run(Block& block) const {
    try {
      // Records grow by a delimiter and up to 24 characters of probability;
      // start with room for typical rows and grow when a record needs more.
      const std::size_t room = 2 * block.in.size() + 4096;
      if (block.out.size() < room) block.out.resize(room);
      if (block.parsed)
        run_parsed(block);
      else
        run_lines(block);
    } catch (...) {
      block.crash = std::current_exception();
    }
  }

 private:
  enum class Field { written, skipped, failed };
  // One record's new field: written (a probability, or nothing for a
  // missing score under MissingPolicy::empty), skipped (a missing score
  // under MissingPolicy::skip: the caller takes the record back out) or
  // failed (block.failure set).
  Field append_probability(Block& block, char*& w, std::string_view text, std::uint64_t line) const {
    const std::optional<double> parsed = parse_number(text);
    const double score = parsed.value_or(0.0);
    // valid_on_scale(), written out: this runs once per row.
    if (parsed && (scale_ == Scale::probability ? score >= 0.0 && score <= 1.0 : std::isfinite(score))) {
      const Mapped m = map_.map(score);
      block.counts.outside += (score < o_.fitted_min || score > o_.fitted_max) ? 1 : 0;
      block.counts.clamped += m.outside_fit_range ? 1 : 0;
      block.counts.clipped += m.clipped ? 1 : 0;
      w = block.text.write(w, m.probability, o_.digits);
      if (o_.interval) {
        const std::array<double, 2> i = map_.interval(score);
        *w++ = delimiter_;
        w = block.text.write(w, i[0], o_.digits);
        *w++ = delimiter_;
        w = block.text.write(w, i[1], o_.digits);
      }
      return Field::written;
    }
    if (o_.missing != MissingPolicy::refuse && is_missing_value(text)) {
      if (o_.missing == MissingPolicy::skip) {
        ++block.counts.skipped;
        return Field::skipped;
      }
      ++block.counts.missing;
      if (o_.interval) {
        *w++ = delimiter_;
        *w++ = delimiter_;
      }
      return Field::written;
    }
    block.failure.kind = Failure::Kind::score;
    block.failure.line = line;
    block.failure.value.assign(text);
    return Field::failed;
  }

  // One record's output without its line end, at w: with --replace, its
  // stored bytes with the score field's bytes [field_offset, +field_length)
  // replaced by the probability; otherwise all its bytes, the delimiter and
  // the probability. `score` is the score's text as parse_number reads it.
  // On skipped or failed, what was written is the caller's to take back.
  Field write_record(Block& block, char*& w, const char* raw, std::size_t raw_length, std::size_t field_offset,
                     std::size_t field_length, std::string_view score, std::uint64_t line) const {
    if (!o_.replace) {
      std::memcpy(w, raw, raw_length);
      w += raw_length;
      *w++ = delimiter_;
      return append_probability(block, w, score, line);
    }
    std::memcpy(w, raw, field_offset);
    w += field_offset;
    const Field f = append_probability(block, w, score, line);
    if (f == Field::written) {
      const std::size_t after = field_offset + field_length;
      std::memcpy(w, raw + after, raw_length - after);
      w += raw_length - after;
    }
    return f;
  }

  void run_lines(Block& block) const {
    const char* p = block.in.data();
    const char* const end = p + block.in.size();
    char* w = block.out.data();
    std::uint64_t line = block.first_line;
    const std::size_t k = o_.score_column;
    const char d = delimiter_;
    while (p < end) {
      const char* const start = p;
      const char* field = k == 0 ? p : nullptr;
      const char* field_end = nullptr;
      std::size_t delimiters = 0;
      // Up to the line end: sixteen bytes at a time while they last (a NUL
      // among them sends the rest of the line to the byte loop below, which
      // locates it), then byte by byte.
      auto delimiter_at = [&](const char* at) {
        ++delimiters;
        if (delimiters == k) field = at + 1;
        else if (delimiters == k + 1) field_end = at;
      };
      bool at_line_end = false;
#if defined(__SSE2__)
      const __m128i newline16 = _mm_set1_epi8('\n'), delimiter16 = _mm_set1_epi8(d), nul16 = _mm_setzero_si128();
      while (end - p >= 16) {
        const __m128i v = _mm_loadu_si128(reinterpret_cast<const __m128i*>(p));
        const unsigned newlines = static_cast<unsigned>(_mm_movemask_epi8(_mm_cmpeq_epi8(v, newline16)));
        const unsigned before = newlines ? (newlines & (0u - newlines)) - 1 : 0xFFFFu;
        if (static_cast<unsigned>(_mm_movemask_epi8(_mm_cmpeq_epi8(v, nul16))) & before) break;
        for (unsigned m = static_cast<unsigned>(_mm_movemask_epi8(_mm_cmpeq_epi8(v, delimiter16))) & before; m;
             m &= m - 1)
          delimiter_at(p + __builtin_ctz(m));
        if (newlines) {
          p += __builtin_ctz(newlines);
          at_line_end = true;
          break;
        }
        p += 16;
      }
#endif
      for (; !at_line_end && p < end; ++p) {
        const char c = *p;
        if (c == d) {
          delimiter_at(p);
        } else if (c == '\n') {
          break;
        } else if (c == '\0') {
          block.failure.kind = Failure::Kind::nul;
          block.failure.line = line;
          block.failure.column = delimiters + 1;
          block.out_size = static_cast<std::size_t>(w - block.out.data());
          return;
        }
      }
      const char* raw_end = p;
      if (raw_end > start && raw_end[-1] == '\r') --raw_end;
      const char* const next = p < end ? p + 1 : p;
      if (raw_end == start && fields_ != 1) {  // a blank line (in a one-column file, an empty score)
        line += p < end ? 1 : 0;
        p = next;
        continue;
      }
      if (delimiters + 1 != fields_) {
        block.failure.kind = Failure::Kind::ragged;
        block.failure.line = line;
        block.failure.fields = delimiters + 1;
        break;
      }
      if (!field_end) field_end = raw_end;  // the score is the last field
      const std::size_t raw_length = static_cast<std::size_t>(raw_end - start);
      reserve(block, w, raw_length);
      char* const row_start = w;
      const std::size_t field_length = static_cast<std::size_t>(field_end - field);
      const Field f = write_record(block, w, start, raw_length, static_cast<std::size_t>(field - start),
                                   field_length, std::string_view(field, field_length), line);
      if (f == Field::failed) break;
      if (f == Field::skipped) {
        w = row_start;
      } else {
        ++block.counts.rows;
        for (const char* q = raw_end; q < next; ++q) *w++ = *q;
      }
      line += p < end ? 1 : 0;
      p = next;
    }
    block.out_size = static_cast<std::size_t>(w - block.out.data());
  }

  void run_parsed(Block& block) const {
    char* w = block.out.data();
    for (const Block::Parsed& r : block.records) {
      reserve(block, w, r.raw_length + r.end_length);
      char* const row_start = w;
      const Field f = write_record(block, w, block.in.data() + r.raw_offset, r.raw_length, r.field_offset,
                                   r.field_length, std::string_view(block.scores.data() + r.score_offset, r.score_length),
                                   r.line);
      if (f == Field::failed) break;
      if (f == Field::skipped) {
        w = row_start;
        continue;
      }
      ++block.counts.rows;
      std::memcpy(w, block.in.data() + r.raw_offset + r.raw_length, r.end_length);
      w += r.end_length;
    }
    block.out_size = static_cast<std::size_t>(w - block.out.data());
  }

  const CalibrationMap& map_;
  Scale scale_;
  ApplyStreamOptions o_;
  char delimiter_;
  std::size_t fields_;
};

// Worker threads taking blocks from a queue.
class Workers {
 public:
  Workers(const Mapper& mapper, unsigned count) : mapper_(mapper) {
    for (unsigned i = 0; i < count; ++i) threads_.emplace_back([this] { work(); });
  }
  ~Workers() {
    {
      std::lock_guard<std::mutex> lock(mutex_);
      stopping_ = true;
    }
    wake_workers_.notify_all();
    for (std::thread& t : threads_) t.join();
  }
  Workers(const Workers&) = delete;
  Workers& operator=(const Workers&) = delete;

  void submit(Block& block) {
    {
      std::lock_guard<std::mutex> lock(mutex_);
      queue_.push_back(&block);
    }
    wake_workers_.notify_one();
  }
  void wait(Block& block) {
    std::unique_lock<std::mutex> lock(mutex_);
    block_done_.wait(lock, [&] { return block.done; });
  }

 private:
  void work() {
    for (;;) {
      Block* block = nullptr;
      {
        std::unique_lock<std::mutex> lock(mutex_);
        wake_workers_.wait(lock, [&] { return stopping_ || !queue_.empty(); });
        if (queue_.empty()) return;
        block = queue_.front();
        queue_.pop_front();
      }
      mapper_.run(*block);
      {
        std::lock_guard<std::mutex> lock(mutex_);
        block->done = true;
      }
      block_done_.notify_all();
    }
  }

  const Mapper& mapper_;
  std::mutex mutex_;
  std::condition_variable wake_workers_, block_done_;
  std::deque<Block*> queue_;
  bool stopping_ = false;
  std::vector<std::thread> threads_;
};

// Fills `block` from the reader: a run of quote-free lines in bulk or, at a
// line with quotes, records through next() up to the block size or until
// the next 16 KiB hold no quote. An error
// from the reader is kept in block.read_error, after the records read before
// it. False at the end of the input (and no error).
bool read_block(CsvReader& reader, Block& block, std::size_t score_column, std::size_t block_bytes) {
  block.reset();
  try {
    switch (reader.take_lines(block.in, block_bytes, block.first_line)) {
      case CsvReader::Bulk::lines:
        return true;
      case CsvReader::Bulk::end:
        return false;
      case CsvReader::Bulk::quoted:
        break;
    }
    block.parsed = true;
    Record record;
    while (block.in.size() < block_bytes && reader.next(record)) {
      const std::string_view score = record.fields[score_column];
      const auto [field_offset, field_length] = stored_field(record.raw, score_column, reader.delimiter());
      block.records.push_back(Block::Parsed{block.in.size(), record.raw.size(), record.line_end.size(),
                                            block.scores.size(), score.size(), field_offset, field_length,
                                            record.line});
      block.in.append(record.raw);
      block.in.append(record.line_end);
      block.scores.append(score);
      if (!reader.quote_ahead(std::size_t{16} << 10)) break;
    }
    return !block.records.empty();
  } catch (const Error&) {
    block.read_error = std::current_exception();
    return true;
  }
}

}  // namespace

char* probability_text(char* first, char* last, double p, int digits) {
  if (digits <= 0) return std::to_chars(first, last, p).ptr;
  return std::to_chars(first, last, p, std::chars_format::general, std::min(digits, 17)).ptr;
}

std::pair<std::size_t, std::size_t> stored_field(std::string_view record, std::size_t index, char delimiter) {
  // As CsvReader splits: a field opening with a quote runs to the quote that
  // is not doubled; any other field runs to the next delimiter (quotes
  // inside it are text).
  std::size_t i = 0;
  for (std::size_t field = 0;; ++field) {
    const std::size_t begin = i;
    if (i < record.size() && record[i] == '"') {
      for (++i; i < record.size(); ++i) {
        if (record[i] != '"') continue;
        if (i + 1 < record.size() && record[i + 1] == '"') {
          ++i;
          continue;
        }
        ++i;
        break;
      }
    }
    while (i < record.size() && record[i] != delimiter) ++i;
    if (field == index) return {begin, i - begin};
    if (i == record.size()) return {record.size(), 0};
    ++i;
  }
}

ApplyCounts apply_stream(CsvReader& reader, const CalibrationMap& map, OutputFile& out,
                         const ApplyStreamOptions& options, const ApplyProgress& progress) {
  const Mapper mapper(map, options, reader.delimiter(), reader.header().size());
  const unsigned threads = std::max(1u, options.threads);
  // Blocks in flight: enough for every worker to have one queued behind the
  // one it is on, while the reading thread writes the oldest.
  std::vector<std::unique_ptr<Block>> ring;
  for (unsigned i = 0; i < (threads == 1 ? 1 : 2 * threads + 1); ++i) ring.push_back(std::make_unique<Block>());
  std::unique_ptr<Workers> workers;
  if (threads > 1) workers = std::make_unique<Workers>(mapper, threads);

  ApplyCounts total;
  auto finish = [&](Block& block) {
    if (workers) workers->wait(block);
    if (block.crash) std::rethrow_exception(block.crash);
    out.write(std::string_view(block.out.data(), block.out_size));
    total.rows += block.counts.rows;
    total.outside += block.counts.outside;
    total.clamped += block.counts.clamped;
    total.clipped += block.counts.clipped;
    total.missing += block.counts.missing;
    total.skipped += block.counts.skipped;
    const Failure& f = block.failure;
    if (f.kind == Failure::Kind::none) {
      if (block.read_error) std::rethrow_exception(block.read_error);
      if (progress) progress(total.rows, reader.bytes_read(), reader.total_bytes());
      return;
    }
    if (f.kind == Failure::Kind::ragged) throw ragged_row(reader.name(), f.line, f.fields, reader.header().size());
    if (f.kind == Failure::Kind::nul) throw nul_byte(reader.name(), f.line, f.column);
    Location loc;
    loc.file = reader.name();
    loc.line = f.line;
    loc.column = options.score_column + 1;
    loc.column_name = reader.header()[options.score_column];
    if (is_missing_value(f.value))
      throw Error(ErrorKind::input, "the score is missing", loc, f.value, missing_score_expected);
    const ScoreProblem why = score_problem(f.value, map.scale(), options.other_scales_hint);
    throw Error(ErrorKind::input,
                why.message + " (the map was fitted on the " + std::string(to_string(map.scale())) + " scale)", loc,
                f.value, why.expected);
  };

  // Blocks are read in order into the ring and finished (written) in the
  // same order; with workers, up to ring.size() are in flight.
  std::size_t submitted = 0, finished = 0;
  for (;;) {
    if (submitted - finished == ring.size()) {
      finish(*ring[finished % ring.size()]);
      ++finished;
    }
    Block& block = *ring[submitted % ring.size()];
    if (!read_block(reader, block, options.score_column, options.block_bytes)) break;
    if (workers) {
      workers->submit(block);
    } else {
      mapper.run(block);
      block.done = true;
    }
    ++submitted;
    if (block.read_error) break;  // raised when the block is finished, after any earlier error
  }
  while (finished < submitted) finish(*ring[finished++ % ring.size()]);
  return total;
}

}  // namespace plumb::io
