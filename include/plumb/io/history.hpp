#pragma once
// The history file: one JSON object per line (JSON Lines), one line per run
// of a nightly job, so that a report can draw each figure's trend over the
// nights (docs/history-format.md). Any command may append a line of its own
// (its "command" names it); plumb report reads the lines of "report" and
// leaves the others alone.
//
// Appends are atomic with respect to each other: the whole line goes out in
// one write(2) on a descriptor opened with O_APPEND, under an exclusive
// advisory lock (flock(2)) held from the check of the file's tail to the
// end of the write, so lines of concurrent runs never interleave and a run
// never appends after a torn line it has not checked. On a local POSIX file
// system (ext4, xfs, btrfs, tmpfs) that is guaranteed; on NFS O_APPEND is
// emulated by the client and flock is mapped to byte-range locks, so the
// guarantee holds only where the server honours locks. A run killed during
// its write can still leave a torn last line: the next reader or writer
// finds it (no final newline, or not valid JSON) and refuses it with its
// file:line, unless the user chose TornHistory::cut (--torn-history cut).
#include <cstdint>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "plumb/report.hpp"

namespace plumb::io {

inline constexpr const char* history_format_marker = "plumb-history";
// Version rule: a change that only adds keys keeps the version (readers
// ignore keys they do not know); a change that removes, renames or changes
// the meaning of a key raises it. A reader refuses a line of another
// version with its file:line rather than read figures it may misunderstand.
inline constexpr int history_format_version = 1;

// What to do with a torn last line (no final newline, or not valid JSON;
// a whole JSON line of another format or version is not torn and is always
// refused): refuse (the default, Error(input) with file:line and the
// hint --torn-history cut), or cut it: leave it out of what is read and,
// when appending, truncate the file to the end of the last whole line before
// the new line goes out. A bad line before the last is always refused.
enum class TornHistory { refuse, cut };

struct HistoryLine {
  std::uint64_t line = 0;  // 1-based physical line in the file
  nlohmann::json entry;    // a JSON object, its format and version checked
};

struct History {
  std::string path;
  std::vector<HistoryLine> lines;  // in file order
  // Set when a torn last line was cut (TornHistory::cut): its line number
  // and its byte count, for the one line the command prints on stderr.
  std::optional<std::uint64_t> cut_line;
  std::uint64_t cut_bytes = 0;
};

// Reads and checks every line of `path`. A file that does not exist is an
// empty history (the first night). Refuses with Error(input) naming
// path:line (and the column within the line for a JSON syntax error): a
// line that is not valid JSON, not an object, without "format":
// "plumb-history", of a "version" other than history_format_version, or
// without a string "command" and a "date" of the form YYYY-MM-DD; a torn
// last line likewise unless `torn` is cut. Error(io) when the file cannot
// be read.
History read_history(const std::string& path, TornHistory torn);

// Appends `entry` (a JSON object; Error(internal) otherwise) as one line,
// with "format" and "version" set first, and returns the history as it
// stands after the append, read under the same lock (so it holds lines
// other runs appended since an earlier read_history, and the new line
// last). Creates the file (mode 0644 before the umask) when it does not
// exist. Every line already in the file is checked as read_history does
// before anything is written, so a refusal leaves the file as it was. A
// failed or short write is undone (the file is truncated back to its
// length before the write) and gives Error(io). Strings that are not valid
// UTF-8 are written with U+FFFD in place of the bad bytes.
History append_history(const std::string& path, nlohmann::json entry, TornHistory torn);

// What a report run records beside its figures.
struct HistoryRun {
  std::string date;          // the night the run stands for, YYYY-MM-DD
  std::string time_utc;      // when it ran, ISO 8601 UTC ("2026-12-02T11:32:40Z")
  std::string input_sha256;  // of the input bytes (rows or tally); empty: not known
  std::string tool;          // "plumb 0.1.0"
};

// The line plumb report appends (docs/history-format.md): command "report",
// the run's date and time, the input's source, hash and rows, and per
// reported column its name, its map's identity (file, kind, integrity hash,
// creation time; null for a --score column), every gate figure with its
// bootstrap interval where the report has one, and the gates' outcomes.
nlohmann::json report_history_entry(const Report& report, const HistoryRun& run);

// The trend of each of tonight's columns that a gate without a column
// would read (the mapped columns when there are maps, else every column),
// over the "report" lines of `history` whose column of the same name has
// figures: the figures ece (or ece_mass, as the report's binning), mcb,
// brier and auc, then any other figure a gate of tonight's reads on that
// column, each with tonight's gates on it. A point is marked refit when
// the column's map integrity differs from that of the column's previous
// point. The points are in date order; lines of one date keep their file
// order (the order the runs appended them).
std::vector<TrendSeries> trend_of_history(const History& history, const Report& tonight);

// Whether `text` is a date YYYY-MM-DD of the Gregorian calendar.
bool is_history_date(const std::string& text);

}  // namespace plumb::io
