#include "test_util.h"

#include <cmath>
#include <cstdlib>
#include <fstream>
#include <random>

#include "godwit/audio/memory_source.h"

namespace godwit::test {

TempDir::TempDir() {
  std::random_device rd;
  path_ = std::filesystem::temp_directory_path() / ("godwit-test-" + std::to_string(rd()));
  std::filesystem::create_directories(path_);
}

TempDir::~TempDir() {
  std::error_code ec;
  std::filesystem::remove_all(path_, ec);
}

SourceOpener MemoryFiles::opener() const {
  return [this](const std::string& path, ChannelChoice choice) -> Result<SourcePtr> {
    auto it = files.find(path);
    if (it == files.end()) return Error{ErrorCode::not_found, "no such file", path, std::nullopt};
    auto src = std::make_unique<MemorySource>(path, it->second.mono, 1, it->second.rate_hz, choice);
    if (it->second.fail_at_frame >= 0) src->fail_at(it->second.fail_at_frame);
    return SourcePtr(std::move(src));
  };
}

LocateOptions fast_locate_options(const MemoryFiles& files) {
  LocateOptions o;
  o.opener = files.opener();
  o.correlator.planner = Planner::estimate;
  o.bank.max_fft_size = 1 << 18;
  return o;
}

std::shared_ptr<const TemplateBank> make_bank(const std::vector<Samples>& templates, size_t fixed_fft_size) {
  std::vector<TemplateInput> in;
  for (size_t i = 0; i < templates.size(); ++i) {
    // Appended, not `"t" + std::string&&`: GCC 12's -Wrestrict false positive (PR 105329).
    std::string id = "t";
    id += std::to_string(i);
    in.push_back({id, "mem:" + id, 8000, templates[i]});
  }
  BankOptions o;
  o.fixed_fft_size = fixed_fft_size;
  o.planner = Planner::estimate;
  auto bank = TemplateBank::build(std::move(in), o);
  if (!bank) throw std::runtime_error(bank.error().describe());
  return bank.value();
}

Samples direct_trace(const Samples& tmpl, const Samples& x) {
  const size_t m = tmpl.size();
  double mt = 0;
  for (float v : tmpl) mt += v;
  mt /= static_cast<double>(m);
  double nt = 0;
  for (float v : tmpl) nt += (v - mt) * (v - mt);
  nt = std::sqrt(nt);
  Samples out(x.size() - m + 1);
  for (size_t k = 0; k < out.size(); ++k) {
    double mx = 0;
    for (size_t i = 0; i < m; ++i) mx += x[k + i];
    mx /= static_cast<double>(m);
    double dot = 0, ex = 0;
    for (size_t i = 0; i < m; ++i) {
      const double d = x[k + i] - mx;
      dot += (tmpl[i] - mt) * d;
      ex += d * d;
    }
    out[k] = ex > 0 ? static_cast<float>(dot / (nt * std::sqrt(ex))) : 0.0f;
  }
  return out;
}

void write_f32(const std::string& path, const Samples& x) {
  std::ofstream f(path, std::ios::binary);
  f.write(reinterpret_cast<const char*>(x.data()), static_cast<std::streamsize>(x.size() * sizeof(float)));
}

Samples read_f32(const std::string& path) {
  std::ifstream f(path, std::ios::binary | std::ios::ate);
  const auto size = static_cast<size_t>(f.tellg());
  Samples x(size / sizeof(float));
  f.seekg(0);
  f.read(reinterpret_cast<char*>(x.data()), static_cast<std::streamsize>(x.size() * sizeof(float)));
  return x;
}

int run_reference(const std::string& script, const std::string& args) {
  const std::string cmd = std::string(GODWIT_REFERENCE_PYTHON) + " " + GODWIT_SOURCE_DIR + "/tests/ref/" + script +
                          " " + args;
  return std::system(cmd.c_str());
}

}  // namespace godwit::test
