#include "libseq/io/results.hpp"

#include <array>
#include <cstdio>
#include <fstream>
#include <random>
#include <unistd.h>

#include "libseq/error.hpp"

namespace libseq::io {

void RunResults::validate() const {
  const std::size_t leads_count = leads.size();
  if (leads_count == 0) throw DataError("results: no lead times");
  for (const auto& s : sites) {
    const std::size_t n = s.issue_times.size();
    const std::string where = "results: site '" + s.site.id + "'";
    if (s.observed.size() != n * leads_count) throw DataError(where + ": observed has the wrong length");
    for (const auto& m : s.methods) {
      const std::string what = where + ", method '" + m.method + "'";
      if (m.mean.size() != n * leads_count) throw DataError(what + ": mean has the wrong length");
      if (m.median.size() != n * leads_count) throw DataError(what + ": median has the wrong length");
      if (m.quantiles.size() != n * leads_count * m.quantile_levels.size()) {
        throw DataError(what + ": quantiles have the wrong length");
      }
      if (m.members.size() != n * leads_count * m.member_count) throw DataError(what + ": members have the wrong length");
    }
  }
}

std::filesystem::path temporary_path_for(const std::filesystem::path& path) {
  // Same folder so that the final rename is atomic; pid and a random tag keep concurrent writers apart.
  static thread_local std::mt19937_64 tag_source{std::random_device{}()};
  char tag[32];
  std::snprintf(tag, sizeof tag, "%d.%08llx", static_cast<int>(getpid()),
                static_cast<unsigned long long>(tag_source() & 0xffffffffULL));
  return path.parent_path() / ("." + path.filename().string() + ".tmp-" + tag);
}

void write_atomically(const std::filesystem::path& path,
                      const std::function<void(const std::filesystem::path& temporary)>& write) {
  const auto temporary = temporary_path_for(path);
  try {
    write(temporary);
  } catch (...) {
    std::error_code ignored;
    std::filesystem::remove(temporary, ignored);
    throw;
  }
  std::error_code error;
  std::filesystem::rename(temporary, path, error);
  if (error) {
    std::filesystem::remove(temporary, error);
    throw IoError(path.string() + ": cannot move the finished file into place: " + error.message());
  }
}

void write_text_atomically(const std::filesystem::path& path, const std::string& text) {
  write_atomically(path, [&](const std::filesystem::path& temporary) {
    std::ofstream out(temporary, std::ios::binary);
    if (!out) throw IoError(path.string() + ": cannot write (check the folder exists and is writable)");
    out << text;
    out.flush();
    if (!out) throw IoError(path.string() + ": writing failed (disk full?)");
  });
}

namespace {

// SHA-256 as specified in FIPS 180-4 (sections 4.1.2, 4.2.2, 5.1.1, 6.2).
class Sha256 {
 public:
  void update(const unsigned char* data, std::size_t size) {
    for (std::size_t i = 0; i < size; ++i) {
      block_[block_size_++] = data[i];
      if (block_size_ == 64) {
        compress();
        block_size_ = 0;
      }
    }
    bit_count_ += static_cast<std::uint64_t>(size) * 8;
  }
  std::string hex_digest() {
    const std::uint64_t bits = bit_count_;
    const unsigned char one = 0x80;
    update(&one, 1);
    const unsigned char zero = 0;
    while (block_size_ != 56) update(&zero, 1);
    for (int i = 7; i >= 0; --i) {
      const unsigned char byte = static_cast<unsigned char>(bits >> (8 * i));
      update(&byte, 1);
    }
    std::string out;
    char buffer[9];
    for (std::uint32_t word : state_) {
      std::snprintf(buffer, sizeof buffer, "%08x", word);
      out += buffer;
    }
    return out;
  }

 private:
  static std::uint32_t rotr(std::uint32_t x, int n) { return (x >> n) | (x << (32 - n)); }
  void compress() {
    static constexpr std::uint32_t k[64] = {
        0x428a2f98, 0x71374491, 0xb5c0fbcf, 0xe9b5dba5, 0x3956c25b, 0x59f111f1, 0x923f82a4, 0xab1c5ed5,
        0xd807aa98, 0x12835b01, 0x243185be, 0x550c7dc3, 0x72be5d74, 0x80deb1fe, 0x9bdc06a7, 0xc19bf174,
        0xe49b69c1, 0xefbe4786, 0x0fc19dc6, 0x240ca1cc, 0x2de92c6f, 0x4a7484aa, 0x5cb0a9dc, 0x76f988da,
        0x983e5152, 0xa831c66d, 0xb00327c8, 0xbf597fc7, 0xc6e00bf3, 0xd5a79147, 0x06ca6351, 0x14292967,
        0x27b70a85, 0x2e1b2138, 0x4d2c6dfc, 0x53380d13, 0x650a7354, 0x766a0abb, 0x81c2c92e, 0x92722c85,
        0xa2bfe8a1, 0xa81a664b, 0xc24b8b70, 0xc76c51a3, 0xd192e819, 0xd6990624, 0xf40e3585, 0x106aa070,
        0x19a4c116, 0x1e376c08, 0x2748774c, 0x34b0bcb5, 0x391c0cb3, 0x4ed8aa4a, 0x5b9cca4f, 0x682e6ff3,
        0x748f82ee, 0x78a5636f, 0x84c87814, 0x8cc70208, 0x90befffa, 0xa4506ceb, 0xbef9a3f7, 0xc67178f2};
    std::uint32_t w[64];
    for (int t = 0; t < 16; ++t) {
      w[t] = (static_cast<std::uint32_t>(block_[4 * t]) << 24) | (static_cast<std::uint32_t>(block_[4 * t + 1]) << 16) |
             (static_cast<std::uint32_t>(block_[4 * t + 2]) << 8) | static_cast<std::uint32_t>(block_[4 * t + 3]);
    }
    for (int t = 16; t < 64; ++t) {
      const std::uint32_t s0 = rotr(w[t - 15], 7) ^ rotr(w[t - 15], 18) ^ (w[t - 15] >> 3);
      const std::uint32_t s1 = rotr(w[t - 2], 17) ^ rotr(w[t - 2], 19) ^ (w[t - 2] >> 10);
      w[t] = w[t - 16] + s0 + w[t - 7] + s1;
    }
    std::uint32_t a = state_[0], b = state_[1], c = state_[2], d = state_[3];
    std::uint32_t e = state_[4], f = state_[5], g = state_[6], h = state_[7];
    for (int t = 0; t < 64; ++t) {
      const std::uint32_t t1 = h + (rotr(e, 6) ^ rotr(e, 11) ^ rotr(e, 25)) + ((e & f) ^ (~e & g)) + k[t] + w[t];
      const std::uint32_t t2 = (rotr(a, 2) ^ rotr(a, 13) ^ rotr(a, 22)) + ((a & b) ^ (a & c) ^ (b & c));
      h = g;
      g = f;
      f = e;
      e = d + t1;
      d = c;
      c = b;
      b = a;
      a = t1 + t2;
    }
    state_[0] += a;
    state_[1] += b;
    state_[2] += c;
    state_[3] += d;
    state_[4] += e;
    state_[5] += f;
    state_[6] += g;
    state_[7] += h;
  }
  std::array<std::uint32_t, 8> state_{0x6a09e667, 0xbb67ae85, 0x3c6ef372, 0xa54ff53a,
                                      0x510e527f, 0x9b05688c, 0x1f83d9ab, 0x5be0cd19};
  std::array<unsigned char, 64> block_{};
  std::size_t block_size_ = 0;
  std::uint64_t bit_count_ = 0;
};

}  // namespace

std::string sha256_of_file(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw IoError(path.string() + ": cannot open to compute its checksum");
  Sha256 hash;
  std::vector<char> buffer(1 << 16);
  while (in) {
    in.read(buffer.data(), static_cast<std::streamsize>(buffer.size()));
    hash.update(reinterpret_cast<const unsigned char*>(buffer.data()), static_cast<std::size_t>(in.gcount()));
  }
  return hash.hex_digest();
}

}  // namespace libseq::io
