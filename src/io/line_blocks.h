// Reading a file of lines in large blocks of whole lines, for the steps that
// read the split files sheaf itself wrote (learning, encoding): no per-line
// allocation, and each block can go to another thread.
#pragma once

#include <oneapi/tbb/parallel_pipeline.h>

#include <array>
#include <istream>
#include <string>
#include <string_view>

#include "core/batch_pool.h"
#include "core/interrupt.h"
#include "core/tsan.h"

namespace sheaf {

// Fills `block` with `carry` and then up to `bytes` more bytes of `in`, and
// moves a last line without its newline back into `carry` unless the file has
// ended. Returns false when there is nothing left to read.
inline bool read_line_block(std::istream& in, std::string& block, std::string& carry, size_t bytes) {
  block.swap(carry);
  carry.clear();
  size_t have = block.size();
  block.resize(have + bytes);
  in.read(block.data() + have, static_cast<std::streamsize>(bytes));
  block.resize(have + static_cast<size_t>(in.gcount()));
  if (block.empty()) return false;
  size_t nl = block.rfind('\n');
  if (in && nl != std::string::npos) {
    carry.assign(block, nl + 1);
    block.resize(nl + 1);
  }
  return true;
}

// The first filter of a oneTBB pipeline over such a file: each block (about
// `bytes` of whole lines) goes into `text(*t)` of an object t from `pool`,
// until the file ends. Checks for an interrupt before each block (throws
// ErrorException, like every pass). Annotated for ThreadSanitizer: a
// TaskBody, a SerialTurn on `carry`, each block handed on (core/tsan.h).
template <typename T, typename Text>
tbb::filter<void, T*> line_block_source(std::istream& in, std::string& carry, BatchPool<T>& pool, size_t bytes,
                                        Text text) {
  return tbb::make_filter<void, T*>(tbb::filter_mode::serial_in_order,
                                    [&in, &carry, &pool, bytes, text](tbb::flow_control& fc) -> T* {
                                      TaskBody body;
                                      SerialTurn turn(&carry);
                                      throw_if_interrupted();
                                      T* t = pool.acquire();
                                      if (!read_line_block(in, text(*t), carry, bytes)) {
                                        pool.release(t);
                                        fc.stop();
                                        return nullptr;
                                      }
                                      handoff_release(t);
                                      return t;
                                    });
}

// The source and target of a split-file line (target empty without a tab).
inline std::array<std::string_view, 2> tsv_sides(std::string_view line) {
  size_t tab = line.find('\t');
  return {line.substr(0, tab), tab == std::string_view::npos ? std::string_view{} : line.substr(tab + 1)};
}

// Calls fn(line) for every line of a block (without its newline).
template <typename Fn>
void for_each_line(std::string_view block, Fn&& fn) {
  while (!block.empty()) {
    size_t nl = block.find('\n');
    fn(block.substr(0, nl));
    if (nl == std::string_view::npos) break;
    block.remove_prefix(nl + 1);
  }
}

}  // namespace sheaf
