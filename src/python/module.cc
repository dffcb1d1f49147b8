// _sheaf: the native half of the Python package (pybind11).
//
// Exposes the Tokenizer (pipeline/tokenizer.h): text through a run's text
// rules to token ids, one text or a batch on several threads with the GIL
// released, and ids back to text. Ids go out as NumPy uint32 arrays and come
// in as anything NumPy can turn into integers. The Python modules of the
// package (sheaf/*.py) build the public API on it; see docs/python.md.
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <oneapi/tbb/parallel_for.h>
#include <oneapi/tbb/task_arena.h>

#include <cstring>
#include <memory>
#include <stdexcept>
#include <string>
#include <vector>

#include <xxhash.h>

#include "pipeline/tokenizer.h"

namespace py = pybind11;

namespace sheaf {
namespace {

// Errors become Python exceptions with the same one-line message as the
// command line prints.
[[noreturn]] void raise(const Error& e) {
  if (e.kind() == ErrorKind::kUsage || e.kind() == ErrorKind::kPipeline) throw py::value_error(e.describe());
  throw std::runtime_error(e.describe());
}

int side_number(const std::string& side) {
  if (side == "source") return 0;
  if (side == "target") return 1;
  throw py::value_error("side must be \"source\" or \"target\", not \"" + side + "\"");
}

py::array_t<uint32_t> to_array(const std::vector<uint32_t>& ids) {
  py::array_t<uint32_t> a(static_cast<py::ssize_t>(ids.size()));
  if (!ids.empty()) std::memcpy(a.mutable_data(), ids.data(), ids.size() * sizeof(uint32_t));
  return a;
}

// Ids from Python: any integer sequence or array; each must be a token id.
std::vector<uint32_t> from_ids(const Tokenizer& t, const py::handle& ids) {
  auto a = py::array_t<int64_t, py::array::c_style | py::array::forcecast>::ensure(ids);
  if (!a) throw py::type_error("ids must be a sequence of integers");
  if (a.ndim() != 1) throw py::value_error("ids must be one-dimensional");
  std::vector<uint32_t> out(static_cast<size_t>(a.size()));
  const int64_t* p = a.data();
  for (size_t i = 0; i < out.size(); ++i) {
    if (p[i] < 0 || static_cast<uint64_t>(p[i]) >= t.vocabulary().size())
      throw py::value_error(std::to_string(p[i]) + " is not a token id of this vocabulary (0 to " +
                            std::to_string(t.vocabulary().size() - 1) + ")");
    out[i] = static_cast<uint32_t>(p[i]);
  }
  return out;
}

// Decoded text may hold bytes that are not UTF-8 (a model's byte tokens in
// a bad order): they become U+FFFD rather than an exception.
py::str to_str(const std::string& s) {
  PyObject* o = PyUnicode_DecodeUTF8(s.data(), static_cast<Py_ssize_t>(s.size()), "replace");
  if (!o) throw py::error_already_set();
  return py::reinterpret_steal<py::str>(o);
}

class PyTokenizer {
 public:
  static PyTokenizer from_run(const std::string& dir, const std::string& side) {
    auto t = Tokenizer::from_run(dir, side_number(side));
    if (!t.ok()) raise(t.error());
    return PyTokenizer(std::move(t.value()));
  }
  static PyTokenizer from_files(const std::string& vocab, const std::string& pipeline, const std::string& side) {
    auto t = Tokenizer::from_files(vocab, pipeline, side_number(side));
    if (!t.ok()) raise(t.error());
    return PyTokenizer(std::move(t.value()));
  }

  std::string rewrite(const std::string& text) const { return t_->rewrite(text); }

  py::array_t<uint32_t> encode(const std::string& text, bool bos, bool eos, int64_t tag, double dropout,
                               uint64_t seed) const {
    check_dropout(dropout);
    std::vector<uint32_t> ids;
    {
      py::gil_scoped_release nogil;
      t_->encode(text, bos, eos, tag, ids, dropout, seed);
    }
    return to_array(ids);
  }

  // The texts are copied out of Python objects under the GIL, encoded on
  // `threads` threads without it, and turned into arrays under it again.
  // The texts' UTF-8 is looked up under the GIL (kept by the list, not
  // copied), encoded on `threads` threads without it; the ids come back as
  // one array per text, or with `ragged` as one flat array and the offsets
  // of each text's ids in it (n + 1 of them), which costs one object instead
  // of n. With dropout, text i draws from the seed XXH3-64(i, seed): the
  // same for any number of threads.
  py::object encode_batch(const py::list& texts, bool bos, bool eos, int64_t tag, int threads, double dropout,
                          uint64_t seed, bool ragged) const {
    check_dropout(dropout);
    size_t n = texts.size();
    std::vector<std::string_view> views(n);
    for (size_t i = 0; i < n; ++i) {
      PyObject* o = PyList_GET_ITEM(texts.ptr(), static_cast<Py_ssize_t>(i));
      if (!PyUnicode_Check(o)) throw py::type_error("encode_batch takes a list of str");
      Py_ssize_t len = 0;
      const char* utf8 = PyUnicode_AsUTF8AndSize(o, &len);
      if (!utf8) throw py::error_already_set();
      views[i] = std::string_view(utf8, static_cast<size_t>(len));
    }
    std::vector<std::vector<uint32_t>> ids(n);
    {
      py::gil_scoped_release nogil;
      auto work = [&](const tbb::blocked_range<size_t>& r) {
        for (size_t i = r.begin(); i < r.end(); ++i) {
          uint64_t index = i;
          uint64_t text_seed = dropout > 0 ? XXH3_64bits_withSeed(&index, sizeof index, seed) : 0;
          t_->encode(views[i], bos, eos, tag, ids[i], dropout, text_seed);
        }
      };
      if (threads == 1 || n < 2) {
        work(tbb::blocked_range<size_t>(0, n));
      } else {
        tbb::task_arena arena(threads > 0 ? threads : tbb::task_arena::automatic);
        arena.execute([&] { tbb::parallel_for(tbb::blocked_range<size_t>(0, n, 64), work); });
      }
    }
    if (!ragged) {
      py::list out(n);
      for (size_t i = 0; i < n; ++i) out[i] = to_array(ids[i]);
      return out;
    }
    py::array_t<int64_t> offsets(static_cast<py::ssize_t>(n + 1));
    int64_t* off = offsets.mutable_data();
    off[0] = 0;
    for (size_t i = 0; i < n; ++i) off[i + 1] = off[i] + static_cast<int64_t>(ids[i].size());
    py::array_t<uint32_t> flat(static_cast<py::ssize_t>(off[n]));
    uint32_t* dst = flat.mutable_data();
    {
      py::gil_scoped_release nogil;
      for (size_t i = 0; i < n; ++i)
        if (!ids[i].empty()) std::memcpy(dst + off[i], ids[i].data(), ids[i].size() * sizeof(uint32_t));
    }
    return py::make_tuple(flat, offsets);
  }

  py::str decode(const py::handle& ids, bool stop_at_eos, bool skip_special) const {
    std::vector<uint32_t> v = from_ids(*t_, ids);
    return to_str(t_->decode(v.data(), v.size(), stop_at_eos, skip_special));
  }

  std::vector<std::string> tokens(const std::string& text) const {
    std::vector<uint32_t> ids;
    t_->encode(text, false, false, -1, ids);
    std::vector<std::string> out;
    for (uint32_t id : ids) out.push_back(escape_token(t_->vocabulary().token(id).bytes));
    return out;
  }

  std::string token(int64_t id) const {
    if (id < 0 || static_cast<uint64_t>(id) >= t_->vocabulary().size())
      throw py::value_error(std::to_string(id) + " is not a token id of this vocabulary");
    return escape_token(t_->vocabulary().token(static_cast<uint32_t>(id)).bytes);
  }

  const Tokenizer& native() const { return *t_; }

  static void check_dropout(double p) {
    if (!(p >= 0 && p <= 1)) throw py::value_error("dropout must be a probability, from 0 to 1");
  }

 private:
  explicit PyTokenizer(std::unique_ptr<Tokenizer> t) : t_(std::move(t)) {}
  std::shared_ptr<Tokenizer> t_;
};

}  // namespace
}  // namespace sheaf

PYBIND11_MODULE(_sheaf, m) {
  using sheaf::PyTokenizer;
  m.doc() = "native half of the sheaf package; use the names in sheaf instead";
  py::class_<PyTokenizer>(m, "Tokenizer")
      .def_static("from_run", &PyTokenizer::from_run, py::arg("run_dir"), py::arg("side"))
      .def_static("from_files", &PyTokenizer::from_files, py::arg("vocab"), py::arg("pipeline"), py::arg("side"))
      .def("rewrite", &PyTokenizer::rewrite, py::arg("text"))
      .def("encode", &PyTokenizer::encode, py::arg("text"), py::arg("bos"), py::arg("eos"), py::arg("tag"),
           py::arg("dropout"), py::arg("seed"))
      .def("encode_batch", &PyTokenizer::encode_batch, py::arg("texts"), py::arg("bos"), py::arg("eos"), py::arg("tag"),
           py::arg("threads"), py::arg("dropout"), py::arg("seed"), py::arg("ragged"))
      .def("decode", &PyTokenizer::decode, py::arg("ids"), py::arg("stop_at_eos"), py::arg("skip_special"))
      .def("tokens", &PyTokenizer::tokens, py::arg("text"))
      .def("token", &PyTokenizer::token, py::arg("id"))
      .def_property_readonly("vocab_size", [](const PyTokenizer& t) { return t.native().vocabulary().size(); })
      .def_property_readonly("pad_id", [](const PyTokenizer& t) { return t.native().vocabulary().special(sheaf::kPad); })
      .def_property_readonly("unk_id", [](const PyTokenizer& t) { return t.native().vocabulary().special(sheaf::kUnk); })
      .def_property_readonly("bos_id", [](const PyTokenizer& t) { return t.native().vocabulary().special(sheaf::kBos); })
      .def_property_readonly("eos_id", [](const PyTokenizer& t) { return t.native().vocabulary().special(sheaf::kEos); })
      .def_property_readonly("shard_bos", [](const PyTokenizer& t) { return t.native().shard_bos(); })
      .def_property_readonly("shard_eos", [](const PyTokenizer& t) { return t.native().shard_eos(); })
      .def_property_readonly("shard_tag", [](const PyTokenizer& t) { return t.native().shard_tag(); })
      .def("user_id", [](const PyTokenizer& t, const std::string& text) { return t.native().vocabulary().user_id(text); })
      .def_property_readonly("user_tokens", [](const PyTokenizer& t) {
        std::vector<std::string> out;
        for (const auto& u : t.native().vocabulary().user_tokens()) out.push_back(u.first);
        return out;
      })
      .def_property_readonly("vocabulary_path", [](const PyTokenizer& t) { return t.native().vocabulary_path(); })
      .def_property_readonly("vocabulary_checksum",
                             [](const PyTokenizer& t) { return t.native().vocabulary().checksum(); });
}
