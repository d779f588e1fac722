#include "daemon/server/config_file.h"

#include <fcntl.h>
#include <google/protobuf/descriptor.h>
#include <google/protobuf/io/coded_stream.h>
#include <google/protobuf/io/tokenizer.h>
#include <google/protobuf/io/zero_copy_stream_impl_lite.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>

namespace bayline::server {
namespace {

using google::protobuf::Descriptor;
using google::protobuf::FieldDescriptor;
using ParseInfoTree = google::protobuf::TextFormat::ParseInfoTree;

class CollectErrors : public google::protobuf::io::ErrorCollector {
 public:
  explicit CollectErrors(std::string file) : file_(std::move(file)) {}
  void AddError(int line, google::protobuf::io::ColumnNumber column,
                const std::string& message) override {
    Add(line, column, message);
  }
  void AddWarning(int line, google::protobuf::io::ColumnNumber column,
                  const std::string& message) override {
    Add(line, column, "warning: " + message);
  }
  const std::string& text() const { return text_; }

 private:
  void Add(int line, int column, const std::string& message) {
    if (!text_.empty()) text_ += '\n';
    text_ +=
        file_ + ":" + std::to_string(line + 1) + ":" + std::to_string(column + 1) + ": " + message;
  }
  std::string file_;
  std::string text_;
};

// Splits "name[3]" into ("name", 3); a plain name gives index -1.
std::pair<std::string, int> SplitIndex(std::string_view part) {
  size_t open = part.find('[');
  if (open == std::string_view::npos || part.back() != ']') return {std::string(part), -1};
  int index = 0;
  for (char c : part.substr(open + 1, part.size() - open - 2)) {
    if (c < '0' || c > '9') return {std::string(part.substr(0, open)), -1};
    index = index * 10 + (c - '0');
  }
  return {std::string(part.substr(0, open)), index};
}

// Reads a regular file whole. Opened non-blocking so that a FIFO is refused, not waited on.
bool ReadConfigText(const std::filesystem::path& path, std::string* text, std::string* error) {
  const int fd = ::open(path.c_str(), O_RDONLY | O_NONBLOCK | O_CLOEXEC);
  if (fd < 0) {
    *error = path.string() + ": cannot open: " + std::strerror(errno);
    return false;
  }
  struct stat st {};
  bool ok = ::fstat(fd, &st) == 0;
  if (!ok) {
    *error = path.string() + ": cannot stat: " + std::strerror(errno);
  } else if (!S_ISREG(st.st_mode)) {
    *error = path.string() +
             (S_ISDIR(st.st_mode) ? ": is a directory, not a config file" : ": not a regular file");
    ok = false;
  }
  char buffer[1 << 16];
  while (ok) {
    const ssize_t n = ::read(fd, buffer, sizeof buffer);
    if (n < 0 && errno == EINTR) continue;
    if (n < 0) {
      *error = path.string() + ": read error: " + std::strerror(errno);
      ok = false;
    } else if (n == 0) {
      break;
    } else if (text->size() + size_t(n) > kMaxConfigFileBytes) {
      *error = path.string() + ": larger than " + std::to_string(kMaxConfigFileBytes) + " bytes";
      ok = false;
    } else {
      text->append(buffer, size_t(n));
    }
  }
  ::close(fd);
  return ok;
}

// Whether text-format `text` holds anything but whitespace and '#' comments.
bool SetsAnything(std::string_view text) {
  bool in_comment = false;
  for (char c : text) {
    if (in_comment) {
      in_comment = c != '\n';
    } else if (c == '#') {
      in_comment = true;
    } else if (c != ' ' && c != '\t' && c != '\n' && c != '\r' && c != '\f' && c != '\v') {
      return true;
    }
  }
  return false;
}

}  // namespace

FieldLocator::FieldLocator() : tree_(std::make_unique<ParseInfoTree>()) {}
FieldLocator::~FieldLocator() = default;

int FieldLocator::LineOf(std::string_view field_path) const {
  const Descriptor* descriptor = bayline::v1::DaemonConfig::descriptor();
  const ParseInfoTree* tree = tree_.get();
  int best = 0;
  while (!field_path.empty() && tree != nullptr && descriptor != nullptr) {
    size_t dot = field_path.find('.');
    std::string_view part = field_path.substr(0, dot);
    field_path = dot == std::string_view::npos ? std::string_view() : field_path.substr(dot + 1);
    auto [name, index] = SplitIndex(part);
    const FieldDescriptor* field = descriptor->FindFieldByName(name);
    if (field == nullptr) break;
    if (field->is_repeated() && index < 0) index = 0;
    if (!field->is_repeated()) index = -1;
    auto location = tree->GetLocation(field, index);
    if (location.line < 0) break;
    best = location.line + 1;
    if (field->cpp_type() != FieldDescriptor::CPPTYPE_MESSAGE) break;
    tree = tree->GetTreeForNested(field, index);
    descriptor = field->message_type();
  }
  return best;
}

bool ParseConfigFile(const std::filesystem::path& path, bayline::v1::DaemonConfig* out,
                     FieldLocator* locator, std::string* error) {
  out->Clear();
  std::string text;
  if (!ReadConfigText(path, &text, error)) return false;
  if (!SetsAnything(text)) {
    *error = path.string() +
             ": empty: no settings (only whitespace or comments); refused, since that is what a "
             "half-written file looks like (run without --config for the defaults)";
    return false;
  }
  CollectErrors errors(path.string());
  google::protobuf::TextFormat::Parser parser;
  parser.RecordErrorsTo(&errors);
  if (locator != nullptr) parser.WriteLocationsTo(locator->tree());
  if (!parser.ParseFromString(text, out)) {
    *error = errors.text().empty() ? path.string() + ": parse error" : errors.text();
    return false;
  }
  return true;
}

void MergeConfigOver(const bayline::v1::DaemonConfig& overlay, bayline::v1::DaemonConfig* base) {
  const auto& oe = overlay.endpoints();
  auto* be = base->mutable_endpoints();
  if (oe.pull_bind_size() > 0) *be->mutable_pull_bind() = oe.pull_bind();
  if (oe.sub_connect_size() > 0) *be->mutable_sub_connect() = oe.sub_connect();
  if (!oe.publish_bind().empty()) be->set_publish_bind(oe.publish_bind());
  if (!oe.control_bind().empty()) be->set_control_bind(oe.control_bind());
  if (!overlay.state_dir().empty()) base->set_state_dir(overlay.state_dir());
  if (overlay.snapshot_every_s() != 0) base->set_snapshot_every_s(overlay.snapshot_every_s());
  if (overlay.workers() != 0) base->set_workers(overlay.workers());
  const auto& ol = overlay.limits();
  auto* bl = base->mutable_limits();
  if (ol.max_channels() != 0) bl->set_max_channels(ol.max_channels());
  if (ol.max_channel_name_bytes() != 0) bl->set_max_channel_name_bytes(ol.max_channel_name_bytes());
  if (ol.max_frame_bytes() != 0) bl->set_max_frame_bytes(ol.max_frame_bytes());
  if (ol.max_regressors() != 0) bl->set_max_regressors(ol.max_regressors());
  if (ol.max_ingest_message_bytes() != 0) {
    bl->set_max_ingest_message_bytes(ol.max_ingest_message_bytes());
  }
  if (ol.max_control_message_bytes() != 0) {
    bl->set_max_control_message_bytes(ol.max_control_message_bytes());
  }
  if (ol.ingest_queue_bytes() != 0) bl->set_ingest_queue_bytes(ol.ingest_queue_bytes());
  if (ol.max_queued_bytes() != 0) bl->set_max_queued_bytes(ol.max_queued_bytes());
  if (!overlay.log_level().empty()) base->set_log_level(overlay.log_level());
  if (overlay.rules_size() > 0) *base->mutable_rules() = overlay.rules();
  if (!overlay.shard().empty()) base->set_shard(overlay.shard());
  if (overlay.has_journal()) *base->mutable_journal() = overlay.journal();
  if (overlay.use_default_rules()) base->set_use_default_rules(true);
}

uint64_t ConfigDigest(const bayline::v1::DaemonConfig& config) {
  bayline::v1::DaemonConfig shaping;
  *shaping.mutable_rules() = config.rules();
  *shaping.mutable_limits() = config.limits();
  std::string bytes;
  {
    google::protobuf::io::StringOutputStream stream(&bytes);
    google::protobuf::io::CodedOutputStream coded(&stream);
    coded.SetSerializationDeterministic(true);
    shaping.SerializeToCodedStream(&coded);
  }
  uint64_t h = 0xcbf29ce484222325ull;
  for (unsigned char c : bytes) {
    h ^= c;
    h *= 0x100000001b3ull;
  }
  return h;
}

}  // namespace bayline::server
