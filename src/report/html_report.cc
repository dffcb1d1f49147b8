#include "report/html_report.h"


#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>

namespace sheaf {

namespace {

// Our palette: slate ink, moss for kept data, rust for drops, ochre second.
constexpr const char* kInk = "#27323a";
constexpr const char* kMoss = "#4d7c59";
constexpr const char* kRust = "#b5523b";
constexpr const char* kOchre = "#c8962e";
constexpr const char* kGrid = "#dfe3e0";

std::string esc(const std::string& s) {
  std::string o;
  for (char c : s) {
    switch (c) {
      case '<': o += "&lt;"; break;
      case '>': o += "&gt;"; break;
      case '&': o += "&amp;"; break;
      case '"': o += "&quot;"; break;
      default: o += c;
    }
  }
  return o;
}

std::string fmt(double v, int digits = 0) {
  char b[64];
  std::snprintf(b, sizeof b, "%.*f", digits, v);
  return b;
}

std::string num(uint64_t v) {
  std::string d = std::to_string(v), out;
  for (size_t i = 0; i < d.size(); ++i) {
    if (i > 0 && (d.size() - i) % 3 == 0) out += ',';
    out += d[i];
  }
  return out;
}

// Horizontal bars: the funnel.
std::string funnel_svg(const std::vector<StageCount>& funnel) {
  const int w = 720, row = 26, left = 130, right = 170;
  int h = static_cast<int>(funnel.size()) * row + 20;
  uint64_t top = 1;
  for (const auto& s : funnel) top = std::max<uint64_t>(top, s.in);
  std::ostringstream o;
  o << "<svg viewBox='0 0 " << w << " " << h << "' width='" << w << "' height='" << h << "' role='img'>";
  int y = 10;
  for (const auto& s : funnel) {
    double in = static_cast<double>(s.in), out = static_cast<double>(s.out);
    double scale = (w - left - right) / static_cast<double>(top);
    o << "<text x='" << left - 8 << "' y='" << y + 16 << "' text-anchor='end' class='lbl'>" << esc(s.name) << "</text>";
    o << "<rect x='" << left << "' y='" << y + 3 << "' width='" << fmt(out * scale, 1) << "' height='" << row - 8
      << "' fill='" << kMoss << "'/>";
    o << "<rect x='" << fmt(left + out * scale, 1) << "' y='" << y + 3 << "' width='" << fmt((in - out) * scale, 1)
      << "' height='" << row - 8 << "' fill='" << kRust << "'/>";
    o << "<text x='" << fmt(left + in * scale + 6, 1) << "' y='" << y + 16 << "' class='num'>" << num(static_cast<uint64_t>(out));
    if (in > out) o << " (−" << num(static_cast<uint64_t>(in - out)) << ")";
    o << "</text>";
    y += row;
  }
  o << "</svg>";
  return o.str();
}

// Vertical bars of a fixed-bin histogram.
std::string hist_svg(const HistFigures& h, const char* color, const std::string& unit) {
  const int w = 340, ht = 170, left = 44, bottom = 26;
  const auto& bins = h.bins;
  if (bins.empty()) return "<p class='none'>no data</p>";
  uint64_t top = 1;
  for (uint64_t b : bins) top = std::max<uint64_t>(top, b);
  double bw = (w - left - 8) / static_cast<double>(bins.size());
  std::ostringstream o;
  o << "<svg viewBox='0 0 " << w << " " << ht << "' width='" << w << "' height='" << ht << "' role='img'>";
  o << "<line x1='" << left << "' y1='" << ht - bottom << "' x2='" << w - 4 << "' y2='" << ht - bottom << "' stroke='" << kInk << "'/>";
  o << "<text x='" << left - 4 << "' y='14' text-anchor='end' class='tick'>" << num(top) << "</text>";
  for (size_t i = 0; i < bins.size(); ++i) {
    double v = static_cast<double>(bins[i]);
    double bh = v / static_cast<double>(top) * (ht - bottom - 10);
    o << "<rect x='" << fmt(left + i * bw + 0.5, 1) << "' y='" << fmt(ht - bottom - bh, 1) << "' width='" << fmt(std::max(bw - 1, 0.5), 1)
      << "' height='" << fmt(bh, 1) << "' fill='" << color << "'/>";
  }
  double width = h.bin_width;
  for (size_t i = 0; i <= bins.size(); i += std::max<size_t>(1, bins.size() / 5)) {
    o << "<text x='" << fmt(left + i * bw, 1) << "' y='" << ht - bottom + 14 << "' text-anchor='middle' class='tick'>"
      << fmt(i * width, width < 1 ? 1 : 0) << "</text>";
  }
  o << "<text x='" << w - 4 << "' y='" << ht - 2 << "' text-anchor='end' class='tick'>" << esc(unit) << " (last bin: and more)</text>";
  o << "</svg>";
  return o.str();
}

// Lines: mean tokens per sentence against vocabulary size, per side.
double sweep_value(const SweepRow& r, bool p99) { return p99 ? static_cast<double>(r.tokens.p99) : r.tokens.mean; }

std::string sweep_svg(const std::vector<std::pair<std::string, std::vector<SweepRow>>>& sweep) {
  const int w = 520, ht = 220, left = 50, bottom = 30, right = 90;
  double xmin = 1e18, xmax = 0, ymax = 0;
  for (const auto& [side, rows] : sweep)
    for (const auto& r : rows) {
      double x = std::log2(static_cast<double>(r.size));
      xmin = std::min(xmin, x);
      xmax = std::max(xmax, x);
      ymax = std::max(ymax, static_cast<double>(r.tokens.p99));
    }
  if (xmax <= xmin) xmax = xmin + 1;
  if (ymax <= 0) ymax = 1;
  auto X = [&](double s) { return left + (std::log2(s) - xmin) / (xmax - xmin) * (w - left - right); };
  auto Y = [&](double v) { return ht - bottom - v / ymax * (ht - bottom - 12); };
  std::ostringstream o;
  o << "<svg viewBox='0 0 " << w << " " << ht << "' width='" << w << "' height='" << ht << "' role='img'>";
  for (int k = 0; k <= 4; ++k) {
    double v = ymax * k / 4;
    o << "<line x1='" << left << "' x2='" << w - right << "' y1='" << fmt(Y(v), 1) << "' y2='" << fmt(Y(v), 1) << "' stroke='" << kGrid << "'/>";
    o << "<text x='" << left - 6 << "' y='" << fmt(Y(v) + 4, 1) << "' text-anchor='end' class='tick'>" << fmt(v) << "</text>";
  }
  const char* colors[2] = {kMoss, kOchre};
  int c = 0;
  for (const auto& [side, rows] : sweep) {
    for (bool p99 : {false, true}) {
      std::string pts;
      for (const auto& r : rows)
        pts += fmt(X(static_cast<double>(r.size)), 1) + "," + fmt(Y(sweep_value(r, p99)), 1) + " ";
      o << "<polyline fill='none' stroke='" << colors[c % 2] << "' stroke-width='2'"
        << (p99 ? " stroke-dasharray='5 4'" : "") << " points='" << pts << "'/>";
      if (!rows.empty()) {
        const auto& last = rows.back();
        o << "<text x='" << fmt(X(static_cast<double>(last.size)) + 6, 1) << "' y='" << fmt(Y(sweep_value(last, p99)) + 4, 1)
          << "' class='tick' fill='" << colors[c % 2] << "'>" << esc(side) << (p99 ? " p99" : " mean") << "</text>";
      }
    }
    for (const auto& r : rows)
      o << "<text x='" << fmt(X(static_cast<double>(r.size)), 1) << "' y='" << ht - bottom + 16
        << "' text-anchor='middle' class='tick'>" << num(static_cast<uint64_t>(r.size)) << "</text>";
    ++c;
  }
  o << "<text x='" << (w - right) << "' y='" << ht - 2 << "' text-anchor='end' class='tick'>vocabulary size (log scale); tokens per sentence</text>";
  o << "</svg>";
  return o.str();
}

}  // namespace

std::string render_report(const SummaryFigures& f) {
  const RunRecord& rec = *f.record;
  std::ostringstream o;
  o << "<!DOCTYPE html>\n<html lang='en'><head><meta charset='utf-8'><title>sheaf run report</title><style>"
    << "body{font:14px/1.45 system-ui,-apple-system,'Segoe UI',sans-serif;color:" << kInk
    << ";max-width:1100px;margin:24px auto;padding:0 16px;background:#fbfbf8}"
    << "h1{font-size:22px;margin:0 0 4px}h2{font-size:17px;margin:28px 0 8px;border-bottom:2px solid " << kGrid << "}"
    << "table{border-collapse:collapse;margin:8px 0}td,th{padding:3px 10px;text-align:right;border-bottom:1px solid " << kGrid
    << "}th{font-weight:600}td:first-child,th:first-child{text-align:left}"
    << ".lbl{font-size:12px;fill:" << kInk << "}.num{font-size:12px;fill:" << kInk << "}.tick{font-size:10px;fill:#5b666e}"
    << ".grid{display:flex;flex-wrap:wrap;gap:18px}.card{background:#fff;border:1px solid " << kGrid
    << ";padding:10px 12px;border-radius:6px}.none{color:#888}.warn{color:" << kRust << ";font-weight:600}"
    << ".key span{display:inline-block;width:10px;height:10px;margin:0 4px 0 12px}"
    << "</style></head><body>\n";
  o << "<h1>sheaf run report</h1><p>" << num(rec.read) << " pairs read, <b>" << num(rec.kept) << "</b> kept, " << num(rec.rejected)
    << " rejected.";
  if (!rec.stopped_after.empty()) o << " Stopped after stage “" << esc(rec.stopped_after) << "”.";
  o << "</p>\n";

  o << "<h2>Funnel</h2><p class='key'><span style='background:" << kMoss << "'></span>passed<span style='background:" << kRust
    << "'></span>dropped by the stage</p>" << funnel_svg(rec.stages);
  o << "<table><tr><th>stage</th><th>in</th><th>dropped</th><th style='text-align:left'>reasons</th></tr>";
  for (const auto& s : rec.stages) {
    std::string reasons;
    for (const auto& [k, v] : s.reasons) reasons += (reasons.empty() ? "" : ", ") + esc(k) + " " + num(v);
    std::string changed = text_changes(s.counters);
    if (!changed.empty()) reasons += (reasons.empty() ? "" : "; ") + esc(changed);
    o << "<tr><td>" << esc(s.name) << "</td><td>" << num(s.in) << "</td><td>" << num(s.in - s.out)
      << "</td><td style='text-align:left'>" << reasons << "</td></tr>";
  }
  o << "</table>\n";

  if (!rec.corpora.empty()) {
    o << "<h2>Corpora</h2><p>In priority order: a pair found in two corpora is kept from the first.</p><table><tr><th>corpus</th>"
         "<th>read</th><th>kept</th><th>rejected</th><th>weight</th><th>held out</th>";
    for (const auto& sp : f.splits) o << "<th>" << esc(sp.name) << "</th>";
    o << "</tr>";
    for (const auto& c : rec.corpora) {
      o << "<tr><td>" << esc(c.name) << "</td><td>" << num(c.read) << "</td><td>" << num(c.kept) << "</td><td>"
        << num(c.rejected) << "</td><td>" << fmt(c.weight, 2) << "</td><td>" << (c.held_out ? "yes" : "no") << "</td>";
      for (const auto& sp : f.splits) {
        auto it = c.splits.find(sp.name);
        o << "<td>" << num(it == c.splits.end() ? 0 : it->second) << "</td>";
      }
      o << "</tr>";
    }
    o << "<tr><td><b>total</b></td><td>" << num(rec.read) << "</td><td>" << num(rec.kept) << "</td><td>" << num(rec.rejected)
      << "</td><td></td><td></td>";
    for (const auto& sp : f.splits) o << "<td>" << num(sp.pairs) << "</td>";
    o << "</tr></table>\n";
  }

  o << "<h2>Splits</h2><table><tr><th>split</th><th>pairs</th><th>side</th><th>chars mean / p99</th><th>words mean / p99</th>"
       "<th>tokens mean / p95 / p99 / max</th><th>byte tokens</th></tr>";
  for (const auto& sp : f.splits) {
    for (int k = 0; k < 2; ++k) {
      const SideFigures& x = sp.side[k];
      o << "<tr><td>" << esc(sp.name) << "</td><td>" << num(sp.pairs) << "</td><td>" << (k ? "target" : "source") << "</td><td>"
        << fmt(x.chars.mean, 1) << " / " << x.chars.dist.p99 << "</td><td>" << fmt(x.words.mean, 1) << " / " << x.words.dist.p99
        << "</td>";
      if (x.tokens) {
        const Distribution& t = x.tokens->lengths.dist;
        o << "<td>" << fmt(x.tokens->lengths.mean, 1) << " / " << t.p95 << " / " << t.p99 << " / " << t.max << "</td><td>"
          << fmt(100 * x.tokens->byte_token_rate, 3) << "%</td>";
      } else {
        o << "<td>–</td><td>–</td>";
      }
      o << "</tr>";
    }
  }
  o << "</table>";
  bool leak = false;
  for (const auto& ov : rec.overlaps) leak |= ov.keys != 0;
  if (!rec.overlaps.empty())
    o << (leak ? "<p class='warn'>Splits share keys: see summary.json split_overlap.</p>" : "<p>No split shares a key with another.</p>");

  const SplitFigures* train = nullptr;
  for (const auto& sp : f.splits)
    if (sp.name == "train") train = &sp;
  if (train != nullptr) {
    bool tokens = train->side[0].tokens.has_value();
    o << "<h2>Train lengths (" << (tokens ? "tokens" : "words") << " per sentence)</h2><div class='grid'>";
    for (int k = 0; k < 2; ++k) {
      const SideFigures& x = train->side[k];
      o << "<div class='card'><b>" << (k ? "target" : "source") << "</b><br>"
        << hist_svg(tokens && x.tokens ? x.tokens->lengths : x.words, k == 0 ? kMoss : kOchre, tokens ? "tokens" : "words")
        << "</div>";
    }
    o << "<div class='card'><b>length ratio</b> (source / target characters)<br>" << hist_svg(train->ratio, kInk, "ratio")
      << "</div></div>";
  }

  if (rec.vocabulary) {
    const VocabularyReport& v = *rec.vocabulary;
    o << "<h2>Vocabulary</h2><table><tr><th>vocabulary</th><th>tokens</th><th>alphabet</th><th>merges</th><th>coverage</th><th>note</th></tr>";
    for (const auto& x : v.vocabularies)
      o << "<tr><td>" << esc(x.file) << "</td><td>" << num(x.size) << "</td><td>" << num(x.alphabet) << "</td><td>"
        << num(x.merges) << "</td><td>" << fmt(100 * x.alphabet_coverage, 3) << "%</td><td style='text-align:left'>"
        << (x.stopped_early ? "stopped early: no pair left with min_count" : "") << "</td></tr>";
    o << "</table>";
    for (const auto& x : v.vocabularies) {
      o << "<h2>Size sweep on " << esc(v.sweep_split) << " (" << esc(x.side) << " vocabulary)</h2><div class='grid'><div class='card'>"
        << sweep_svg(x.sweep) << "</div><div class='card'><table><tr><th>side</th><th>size</th><th>mean</th><th>p95</th><th>p99</th>"
        << "<th>tokens/word</th><th>over max</th><th>byte tokens</th></tr>";
      for (const auto& [side, rows] : x.sweep)
        for (const auto& r : rows)
          o << "<tr><td>" << esc(side) << "</td><td>" << num(static_cast<uint64_t>(r.size)) << "</td><td>" << fmt(r.tokens.mean, 1)
            << "</td><td>" << r.tokens.p95 << "</td><td>" << r.tokens.p99 << "</td><td>" << fmt(r.tokens_per_word, 2) << "</td><td>"
            << fmt(100 * r.over_max_length, 2) << "%</td><td>" << fmt(100 * r.byte_token_rate, 3)
            << "%</td></tr>";
      o << "</table></div></div>";
    }
  }
  o << "<p class='tick'>Written by sheaf. Figures: summary.json; every file: manifest.json.</p></body></html>\n";
  return o.str();
}

std::string text_changes(const std::vector<std::pair<std::string, uint64_t>>& counters) {
  std::string out;
  for (const auto& [k, v] : counters) {
    if (v == 0 || (k.rfind("rewritten:", 0) != 0 && k.rfind("changed:", 0) != 0)) continue;
    std::string name = k;
    for (char& c : name) c = c == ':' ? ' ' : c;
    out += (out.empty() ? "" : ", ") + name + " " + std::to_string(v);
  }
  return out;
}

std::string text_changes(const nlohmann::ordered_json& stage) {
  std::vector<std::pair<std::string, uint64_t>> counters;
  if (stage.contains("counters"))
    for (const auto& [k, v] : stage["counters"].items()) counters.emplace_back(k, v.get<uint64_t>());
  return text_changes(counters);
}

}  // namespace sheaf
