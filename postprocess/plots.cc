#include "postprocess/plots.h"

#include <plplot/plstream.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <functional>
#include <fstream>
#include <limits>
#include <memory>
#include <unistd.h>

namespace backcomb::postprocess
{
  namespace
  {
    constexpr double nan = std::numeric_limits<double>::quiet_NaN();

    // Colour map 0 slots: 0 background, 1 axes and text, 2 grid, 3 the
    // shaded near-best range, 4 the best-point marker, 5... the lines.
    constexpr int colour_grid = 2, colour_band = 3, colour_best = 4, first_line_colour = 5;
    // A palette that stays distinguishable in print and for the common
    // colour-vision deficiencies.
    constexpr int palette[][3] = {{0, 114, 178},  {213, 94, 0},   {0, 158, 115}, {204, 121, 167},
                                  {86, 180, 233}, {230, 159, 0},  {0, 0, 0},     {120, 120, 120}};
    constexpr int n_palette = sizeof(palette) / sizeof(palette[0]);
    // After the lines: the translucent band of the line being drawn.
    constexpr int colour_spread = first_line_colour + n_palette;

    // Markers are drawn as text glyphs, which the Cairo drivers render with
    // the system fonts in both SVG and PNG.
    const char *const point_glyph = "●";
    const char *const best_glyph  = "★";

    // PLplot interprets '#' as its escape character in text.
    std::string
    escaped(const std::string &text)
    {
      std::string out;
      for (const char c : text)
        out += c == '#' ? std::string("##") : std::string(1, c);
      return out;
    }

    bool
    device_available(const std::string &name)
    {
      // plgDevs fills arrays that the caller provides, up to n entries.
      std::vector<const char *> menu_array(256, nullptr), name_array(256, nullptr);
      const char **menu = menu_array.data(), **names = name_array.data();
      int          n    = int(name_array.size());
      plgDevs(&menu, &names, &n);
      for (int i = 0; i < n; ++i)
        if (names[i] && name == names[i])
          return true;
      return false;
    }

    // Axis range of finite values, padded by `pad` of the span on both
    // sides; a single value gets a span of its own size (or 1).
    std::pair<double, double>
    padded_range(const std::vector<double> &v, double pad)
    {
      double lo = std::numeric_limits<double>::infinity(), hi = -lo;
      for (const double x : v)
        if (std::isfinite(x))
          lo = std::min(lo, x), hi = std::max(hi, x);
      if (!(lo <= hi))
        return {0, 1};
      double span = hi - lo;
      if (span <= 1e-12 * std::max(std::abs(lo), std::abs(hi)))
        span = lo != 0 ? std::abs(lo) : 1;
      return {lo - pad * span, hi + pad * span};
    }

    struct Axes
    {
      bool   log_x;
      double x_lo, x_hi;
    };

    double
    to_axis(const Axes &a, double x)
    {
      return a.log_x ? std::log10(x) : x;
    }

    // The band of each series as a translucent polygon in the series'
    // colour (low edge forward, high edge back), broken where a value is
    // missing.
    void
    draw_bands(plstream &pls, const SweepPlotData &d, const Axes &axes, const bool pce)
    {
      for (std::size_t k = 0; k < d.series.size(); ++k)
        {
          const PlotSeries          &s  = d.series[k];
          const std::vector<double> &lo = pce ? s.pce_low : s.eta_low, &hi = pce ? s.pce_high : s.eta_high;
          if (lo.size() != s.x.size() || hi.size() != s.x.size())
            continue;
          const auto &c = palette[k % n_palette];
          pls.scol0a(colour_spread, c[0], c[1], c[2], 0.25);
          pls.col0(colour_spread);
          std::vector<double> px, lower, upper;
          auto flush = [&]() {
            if (px.size() > 1)
              {
                std::vector<double> x(px), y(lower);
                x.insert(x.end(), px.rbegin(), px.rend());
                y.insert(y.end(), upper.rbegin(), upper.rend());
                pls.fill(int(x.size()), x.data(), y.data());
              }
            px.clear(), lower.clear(), upper.clear();
          };
          for (std::size_t i = 0; i < s.x.size(); ++i)
            if (std::isfinite(lo[i]) && std::isfinite(hi[i]) && std::isfinite(s.x[i]) && (!axes.log_x || s.x[i] > 0))
              px.push_back(to_axis(axes, s.x[i])), lower.push_back(lo[i]), upper.push_back(hi[i]);
            else
              flush();
          flush();
        }
    }

    // One panel: frame, grid, optional shaded range and best marker, then
    // one line with markers per series (broken where a case has no value).
    void
    draw_panel(plstream &pls, const SweepPlotData &d, const Axes &axes,
               const std::vector<double> PlotSeries::*values, double y_bottom, double y_top,
               const std::string &y_label, bool x_labels, bool mark_best)
    {
      std::vector<double> all;
      for (const auto &s : d.series)
        {
          all.insert(all.end(), (s.*values).begin(), (s.*values).end());
          const bool pce = values == &PlotSeries::pce;
          for (const auto *band : {pce ? &s.pce_low : &s.eta_low, pce ? &s.pce_high : &s.eta_high})
            all.insert(all.end(), band->begin(), band->end());
        }
      const auto [y_lo, y_hi] = padded_range(all, 0.12);

      pls.vpor(0.13, 0.66, y_bottom, y_top);
      pls.wind(axes.x_lo, axes.x_hi, y_lo, y_hi);
      const std::string x_options = axes.log_x ? "lf" : ""; // log axis, fixed-point labels

      if (mark_best && d.range_from && d.range_to && *d.range_to > *d.range_from)
        {
          const double x0 = to_axis(axes, *d.range_from), x1 = to_axis(axes, *d.range_to);
          const double px[] = {x0, x1, x1, x0}, py[] = {y_lo, y_lo, y_hi, y_hi};
          pls.col0(colour_band);
          pls.fill(4, px, py);
        }
      pls.col0(colour_grid);
      pls.width(0.5);
      pls.box(("g" + x_options).c_str(), 0, 0, "g", 0, 0);
      pls.col0(1);
      pls.width(1);
      pls.box(("bcst" + x_options + (x_labels ? "n" : "")).c_str(), 0, 0, "bcnstv", 0, 0);
      pls.mtex("l", 5.0, 0.5, 0.5, y_label.c_str());

      draw_bands(pls, d, axes, values == &PlotSeries::pce);
      for (std::size_t k = 0; k < d.series.size(); ++k)
        {
          const PlotSeries         &s = d.series[k];
          const std::vector<double> &y = s.*values;
          pls.col0(first_line_colour + int(k % n_palette));
          pls.width(2);
          std::vector<double> sx, sy; // the current unbroken segment
          auto flush = [&]() {
            if (sx.size() > 1)
              pls.line(int(sx.size()), sx.data(), sy.data());
            if (!sx.empty())
              pls.string(int(sx.size()), sx.data(), sy.data(), point_glyph);
            sx.clear(), sy.clear();
          };
          for (std::size_t i = 0; i < s.x.size(); ++i)
            if (std::isfinite(y[i]) && std::isfinite(s.x[i]) && (!axes.log_x || s.x[i] > 0))
              sx.push_back(to_axis(axes, s.x[i])), sy.push_back(y[i]);
            else
              flush();
          flush();
        }
      if (mark_best && d.best_x && d.best_pce)
        {
          const double bx = to_axis(axes, *d.best_x), by = *d.best_pce;
          pls.col0(colour_best);
          pls.schr(0, 1.7);
          pls.string(1, &bx, &by, best_glyph);
          pls.schr(0, 0.85);
        }
      pls.col0(1);
    }

    void
    draw_legend(plstream &pls, const SweepPlotData &d)
    {
      std::vector<std::string> text;
      std::vector<PLINT>       opt, line_colour, line_style, symbol_colour, symbol_number, box_colour,
        box_pattern;
      std::vector<PLFLT>       line_width, symbol_scale, box_scale, box_line_width;
      std::vector<const char *> symbol;
      auto add = [&](const std::string &t, PLINT o, PLINT colour, const char *glyph, PLINT n_glyphs,
                     PLFLT glyph_scale) {
        text.push_back(escaped(t));
        opt.push_back(o);
        line_colour.push_back(colour);
        line_style.push_back(1);
        line_width.push_back(2);
        symbol_colour.push_back(colour);
        symbol_number.push_back(n_glyphs);
        symbol_scale.push_back(glyph_scale);
        symbol.push_back(glyph);
        box_colour.push_back(colour);
        box_pattern.push_back(0);
        box_scale.push_back(0.8);
        box_line_width.push_back(1);
      };
      for (std::size_t k = 0; k < d.series.size(); ++k)
        add(d.series[k].label.empty() ? "computed cases" : d.series[k].label,
            PL_LEGEND_LINE | PL_LEGEND_SYMBOL, first_line_colour + int(k % n_palette), point_glyph, 1,
            1.0);
      if (!d.band_label.empty())
        pls.scol0a(colour_spread, palette[0][0], palette[0][1], palette[0][2], 0.25);
      if (!d.band_label.empty())
        add(d.band_label, PL_LEGEND_COLOR_BOX, colour_spread, point_glyph, 1, 1.0);
      if (d.best_x)
        add(d.best_label, PL_LEGEND_SYMBOL, colour_best, best_glyph, 1, 1.8);
      if (d.range_from && d.range_to && *d.range_to > *d.range_from)
        add(d.range_label, PL_LEGEND_COLOR_BOX, colour_band, point_glyph, 1, 1.0);

      std::vector<const char *> text_ptr;
      for (const auto &t : text)
        text_ptr.push_back(t.c_str());
      std::vector<PLINT> text_colour(text.size(), 1);
      PLFLT width = 0, height = 0;
      // In the right margin, level with the upper panel.
      pls.vpor(0.68, 0.99, 0.55, 0.92);
      pls.legend(&width, &height, 0, PL_POSITION_LEFT | PL_POSITION_TOP | PL_POSITION_INSIDE,
                 0.0, 0.0, 0.06, 0, 1, 1, 0, 0, PLINT(text.size()), opt.data(), 0.8, 0.8, 2.0, 0.0,
                 text_colour.data(), text_ptr.data(), box_colour.data(), box_pattern.data(),
                 box_scale.data(), box_line_width.data(), line_colour.data(), line_style.data(),
                 line_width.data(), symbol_colour.data(), symbol_scale.data(), symbol_number.data(),
                 symbol.data());
    }

    void
    draw(plstream &pls, const SweepPlotData &d, const Axes &axes)
    {
      // Labels written here use PLplot's escapes (#d...#u: subscript);
      // text that comes from the user is escaped.
      pls.adv(0);
      pls.schr(0, 0.85);
      draw_panel(pls, d, axes, &PlotSeries::pce, 0.55, 0.92, d.pce_label, false, true);
      pls.mtex("t", 1.5, 0.5, 0.5, ("Power conversion and collection efficiency vs. " + escaped(d.x_label)).c_str());
      draw_panel(pls, d, axes, &PlotSeries::eta, 0.12, 0.49, "collection efficiency η#dc#u", true,
                 false);
      pls.mtex("b", 3.2, 0.5, 0.5, escaped(d.x_label).c_str());
      draw_legend(pls, d);
    }

    // One file: a fresh PLplot stream, drawn and closed, then renamed.
    bool
    plot_file(const std::function<void(plstream &)> &draw_page, const std::string &device,
              const std::string &path, std::vector<std::string> &warnings, const int page_width = 1100,
              const int page_height = 800)
    {
      if (!device_available(device))
        {
          warnings.push_back("no plot " + path + ": the PLplot driver '" + device +
                             "' is not installed (Debian package plplot-driver-cairo)");
          return false;
        }
      const std::string tmp = path + ".tmp" + std::to_string(::getpid());
      // PLplot ends the process when it cannot open its output file, so
      // check that the file can be created first.
      if (!std::ofstream(tmp))
        {
          warnings.push_back("no plot " + path + ": cannot write " + tmp);
          return false;
        }
      {
        auto pls = std::make_unique<plstream>();
        pls->sdev(device.c_str());
        pls->sfnam(tmp.c_str());
        pls->spage(0, 0, page_width, page_height, 0, 0);
        pls->scmap0n(colour_spread + 1);
        pls->scol0(0, 255, 255, 255);
        pls->scol0(1, 0, 0, 0);
        pls->scol0(colour_grid, 215, 215, 215);
        pls->scol0(colour_band, 200, 235, 200);
        pls->scol0(colour_best, 200, 30, 30);
        for (int k = 0; k < n_palette; ++k)
          pls->scol0(first_line_colour + k, palette[k][0], palette[k][1], palette[k][2]);
        pls->init();
        draw_page(*pls);
      } // the destructor ends the stream and closes the file
      std::error_code ec;
      std::filesystem::rename(tmp, path, ec);
      if (ec)
        {
          std::remove(tmp.c_str());
          warnings.push_back("no plot " + path + ": " + ec.message());
          return false;
        }
      return true;
    }
  } // namespace

  std::vector<std::string>
  write_sweep_plots(const SweepPlotData &data, const std::string &stem,
                    std::vector<std::string> &warnings)
  {
    std::vector<double> xs;
    for (const auto &s : data.series)
      for (std::size_t i = 0; i < s.x.size(); ++i)
        if (std::isfinite(s.x[i]) && (std::isfinite(s.pce[i]) || std::isfinite(s.eta[i])))
          xs.push_back(s.x[i]);
    if (xs.empty())
      {
        warnings.push_back("no plot: no case has metrics to plot");
        return {};
      }
    const double lo = *std::min_element(xs.begin(), xs.end());
    const double hi = *std::max_element(xs.begin(), xs.end());
    Axes axes;
    axes.log_x = lo > 0 && hi / lo > 10;
    if (axes.log_x)
      {
        const double l = std::log10(lo), h = std::log10(hi);
        axes.x_lo = l - 0.05 * (h - l), axes.x_hi = h + 0.05 * (h - l);
      }
    else
      std::tie(axes.x_lo, axes.x_hi) = padded_range(xs, 0.05);

    std::vector<std::string> written;
    for (const auto &[device, suffix] : {std::pair<std::string, std::string>{"svgcairo", ".svg"},
                                         {"pngcairo", ".png"}})
      if (plot_file([&](plstream &pls) { draw(pls, data, axes); }, device, stem + suffix, warnings))
        written.push_back(stem + suffix);
    return written;
  }

  std::vector<std::string>
  write_bar_chart(const BarChart &chart, const std::string &stem, std::vector<std::string> &warnings)
  {
    const std::size_t n = chart.values.size();
    if (n == 0 || chart.labels.size() != n || chart.category.size() != n)
      {
        warnings.push_back("no chart " + stem + ": nothing to draw");
        return {};
      }
    double lo = 0, hi = 0;
    for (const double v : chart.values)
      if (std::isfinite(v))
        lo = std::min(lo, v), hi = std::max(hi, v);
    const double span = hi > lo ? hi - lo : 1;
    // Room for the value written beside each bar.
    const double x_lo = lo < 0 ? lo - 0.15 * span : 0, x_hi = hi + 0.18 * span;

    auto draw_page = [&](plstream &pls) {
      pls.adv(0);
      pls.schr(0, 0.8);
      pls.vpor(0.34, 0.80, 0.08, 0.90);
      // Bar k (from the top) occupies y in [n-1-k, n-k].
      pls.wind(x_lo, x_hi, 0, double(n));
      pls.col0(colour_grid);
      pls.width(0.5);
      pls.box("g", 0, 0, "", 0, 0);
      for (std::size_t k = 0; k < n; ++k)
        {
          const double v = chart.values[k];
          const double y0 = double(n - 1 - k) + 0.15, y1 = double(n - k) - 0.15;
          const double pos = (double(n - k) - 0.5) / double(n);
          pls.col0(1);
          pls.mtex("lv", 0.8, pos, 1.0, escaped(chart.labels[k]).c_str());
          if (!std::isfinite(v))
            continue;
          const double px[] = {0, v, v, 0}, py[] = {y0, y0, y1, y1};
          pls.col0(first_line_colour + chart.category[k] % n_palette);
          pls.fill(4, px, py);
          char text[32];
          std::snprintf(text, sizeof text, chart.value_format.c_str(), v);
          pls.col0(1);
          const double tx = v >= 0 ? v + 0.01 * span : v - 0.01 * span;
          pls.ptex(tx, 0.5 * (y0 + y1), 1, 0, v >= 0 ? 0.0 : 1.0, text);
        }
      pls.col0(1);
      pls.width(1);
      pls.box("bcnst", 0, 0, "bc", 0, 0);
      pls.mtex("b", 3.0, 0.5, 0.5, escaped(chart.x_label).c_str());
      pls.mtex("t", 1.5, 0.5, 0.5, escaped(chart.title).c_str());
      // Legend of the categories in the right margin.
      for (std::size_t c = 0; c < chart.category_names.size(); ++c)
        {
          pls.col0(first_line_colour + int(c) % n_palette);
          pls.mtex("rv", 1.0, 0.95 - 0.05 * double(c), 0.0,
                   ("■ " + escaped(chart.category_names[c])).c_str());
        }
      pls.col0(1);
    };
    std::vector<std::string> written;
    for (const auto &[device, suffix] : {std::pair<std::string, std::string>{"svgcairo", ".svg"},
                                         {"pngcairo", ".png"}})
      if (plot_file(draw_page, device, stem + suffix, warnings))
        written.push_back(stem + suffix);
    return written;
  }

  namespace
  {
    // Both files of a picture (SVG, PNG) from one drawing function.
    std::vector<std::string>
    both_files(const std::function<void(plstream &)> &draw_page, const std::string &stem,
               std::vector<std::string> &warnings, int page_width = 1100, int page_height = 800)
    {
      std::vector<std::string> written;
      for (const auto &[device, suffix] : {std::pair<std::string, std::string>{"svgcairo", ".svg"},
                                           {"pngcairo", ".png"}})
        if (plot_file(draw_page, device, stem + suffix, warnings, page_width, page_height))
          written.push_back(stem + suffix);
      return written;
    }

    // Colour map 1: viridis, the perceptually uniform and colour-blind-safe
    // map of S. van der Walt and N. Smith (matplotlib 2.0 default, 2015;
    // CC0), at 17 evenly spaced control points.
    void
    viridis(plstream &pls)
    {
      constexpr int v[17][3] = {{68, 1, 84},    {72, 24, 106},  {71, 45, 123},  {66, 64, 134},  {59, 82, 139},
                                {51, 99, 141},  {44, 114, 142}, {38, 130, 142}, {33, 145, 140}, {31, 160, 136},
                                {40, 174, 128}, {63, 188, 115}, {94, 201, 98},  {132, 212, 75}, {173, 220, 48},
                                {216, 226, 25}, {253, 231, 37}};
      PLFLT pos[17], r[17], g[17], b[17];
      for (int k = 0; k < 17; ++k)
        pos[k] = k / 16.0, r[k] = v[k][0] / 255.0, g[k] = v[k][1] / 255.0, b[k] = v[k][2] / 255.0;
      pls.scmap1n(256);
      pls.scmap1l(true, 17, pos, r, g, b, nullptr);
    }

    // Colour map 0 slots of the pictures (set in plot_file: 0 white, 1 black).
    constexpr int colour_finger = first_line_colour + 7; // the palette's grey
  } // namespace

  double
  film_exaggeration(const double width_um, const double thickness_um)
  {
    const double ratio = width_um / thickness_um / 4.0;
    if (!(ratio > 1))
      return 1;
    const double decade = std::pow(10.0, std::floor(std::log10(ratio)));
    for (const double m : {5.0, 2.0, 1.0})
      if (m * decade <= ratio * (1 + 1e-12))
        return m * decade;
    return decade;
  }

  std::vector<std::string>
  write_jv_plots(const JVPlotData &d, const std::string &stem, std::vector<std::string> &warnings)
  {
    std::vector<double> all_v = d.light_v, all_j = d.light_j;
    all_v.insert(all_v.end(), d.dark_v.begin(), d.dark_v.end());
    all_j.insert(all_j.end(), d.dark_j.begin(), d.dark_j.end());
    if (all_v.size() < 2)
      {
        warnings.push_back("no J-V plot: fewer than two converged points");
        return {};
      }
    // The generator convention (current > 0 under light at short circuit);
    // the dark curve's large forward currents would squash the light one,
    // so the y range follows the light curve when there is one.
    std::vector<double> range_j = d.light_j.empty() ? all_j : d.light_j;
    for (const JVPlotData::Curve &c : d.scans)
      {
        all_v.insert(all_v.end(), c.v.begin(), c.v.end());
        range_j.insert(range_j.end(), c.j.begin(), c.j.end());
      }
    range_j.push_back(0.0);
    auto [j_lo, j_hi]       = padded_range(range_j, 0.08);
    const auto [v_lo, v_hi] = padded_range(all_v, 0.03);
    auto draw_page = [&](plstream &pls) {
      pls.adv(0);
      pls.schr(0, 0.85);
      pls.vpor(0.12, 0.72, 0.12, 0.9);
      pls.wind(v_lo, v_hi, j_lo, j_hi);
      pls.col0(colour_grid);
      pls.width(0.5);
      pls.box("g", 0, 0, "g", 0, 0);
      const double zero_x[] = {v_lo, v_hi}, zero_y[] = {0, 0};
      pls.col0(1);
      pls.line(2, zero_x, zero_y);
      pls.width(1);
      pls.box("bcnst", 0, 0, "bcnstv", 0, 0);
      pls.mtex("b", 3.0, 0.5, 0.5, "bias V (V)");
      pls.mtex("l", 5.0, 0.5, 0.5, "current density J (mA/cm#u2#d), generated current > 0");
      pls.mtex("t", 1.5, 0.5, 0.5, "J-V of the period under light and in the dark");
      auto curve = [&](const std::vector<double> &v, const std::vector<double> &j, int colour) {
        // Points outside the y range are clipped by the viewport.
        pls.col0(colour);
        pls.width(2);
        if (v.size() > 1)
          pls.line(int(v.size()), v.data(), j.data());
        pls.string(int(v.size()), v.data(), j.data(), point_glyph);
      };
      curve(d.light_v, d.light_j, first_line_colour);
      curve(d.dark_v, d.dark_j, first_line_colour + 1);
      for (std::size_t k = 0; k < d.scans.size(); ++k)
        if (d.scans[k].v.size() > 1)
          {
            pls.col0(first_line_colour + 2 + int(k));
            pls.width(2);
            pls.line(int(d.scans[k].v.size()), d.scans[k].v.data(), d.scans[k].j.data());
          }
      if (d.mpp_v && d.mpp_j)
        {
          pls.col0(colour_best);
          pls.schr(0, 1.7);
          pls.string(1, &*d.mpp_v, &*d.mpp_j, best_glyph);
          pls.schr(0, 0.85);
        }
      // Legend in the right margin.
      pls.vpor(0.74, 0.99, 0.12, 0.9);
      pls.wind(0, 1, 0, 1);
      int row = 0;
      auto entry = [&](int colour, const std::string &text) {
        pls.col0(colour);
        pls.ptex(0.02, 0.95 - 0.06 * row++, 1, 0, 0, text.c_str());
      };
      if (!d.light_v.empty())
        entry(first_line_colour, "● light");
      if (!d.dark_v.empty())
        entry(first_line_colour + 1, "● dark");
      for (std::size_t k = 0; k < d.scans.size(); ++k)
        entry(first_line_colour + 2 + int(k), "— " + d.scans[k].label);
      if (d.mpp_v && d.mpp_j)
        {
          char text[96];
          std::snprintf(text, sizeof text, "    %.3f V, %.3g mA/cm#u2#d", *d.mpp_v, *d.mpp_j);
          entry(colour_best, "★ maximum power point");
          entry(colour_best, text);
        }
      pls.col0(1);
    };
    return both_files(draw_page, stem, warnings);
  }

  std::vector<std::string>
  write_fit_plots(const FitPlotData &d, const std::string &stem, std::vector<std::string> &warnings)
  {
    if (d.x.size() < 2)
      {
        warnings.push_back("no fit plot " + stem + ": fewer than two points");
        return {};
      }
    auto shown = [&](double y) { return d.log_y ? (std::abs(y) > 0 ? std::log10(std::abs(y)) : NAN) : y; };
    std::vector<double> ym, yf, ys, res, all;
    for (std::size_t i = 0; i < d.x.size(); ++i)
      {
        ym.push_back(shown(d.measured[i]));
        yf.push_back(shown(d.fitted[i]));
        ys.push_back(i < d.start.size() ? shown(d.start[i]) : NAN);
        res.push_back(d.fitted[i] - d.measured[i]);
      }
    for (const auto *v : {&ym, &yf, &ys})
      for (const double y : *v)
        if (std::isfinite(y))
          all.push_back(y);
    std::vector<double> finite_res;
    for (const double r : res)
      if (std::isfinite(r))
        finite_res.push_back(r);
    finite_res.push_back(0.0);
    if (all.empty())
      all.push_back(0.0);
    const auto [x_lo, x_hi] = padded_range(d.x, 0.03);
    const auto [y_lo, y_hi] = padded_range(all, 0.08);
    const auto [r_lo, r_hi] = padded_range(finite_res, 0.15);
    auto draw_page          = [&](plstream &pls) {
      pls.adv(0);
      pls.schr(0, 0.8);
      // Upper panel: data and model.
      pls.vpor(0.12, 0.72, 0.40, 0.92);
      pls.wind(x_lo, x_hi, y_lo, y_hi);
      pls.col0(colour_grid);
      pls.width(0.5);
      pls.box("g", 0, 0, "g", 0, 0);
      pls.col0(1);
      pls.width(1);
      pls.box("bcst", 0, 0, d.log_y ? "bcnstvl" : "bcnstv", 0, 0);
      pls.mtex("l", 5.0, 0.5, 0.5, d.y_label.c_str());
      pls.mtex("t", 1.5, 0.5, 0.5, d.title.c_str());
      auto line = [&](const std::vector<double> &y, int colour, int style) {
        pls.col0(colour);
        pls.width(2);
        pls.lsty(style);
        // Drawn piecewise between points where the model has a value.
        std::vector<double> xs, yv;
        auto flush = [&]() {
          if (xs.size() > 1)
            pls.line(int(xs.size()), xs.data(), yv.data());
          xs.clear(), yv.clear();
        };
        for (std::size_t i = 0; i < y.size(); ++i)
          if (std::isfinite(y[i]))
            xs.push_back(d.x[i]), yv.push_back(y[i]);
          else
            flush();
        flush();
        pls.lsty(1);
      };
      if (!d.start.empty())
        line(ys, colour_grid, 2);
      line(yf, first_line_colour, 1);
      pls.col0(first_line_colour + 1);
      pls.schr(0, 0.8);
      pls.string(int(d.x.size()), d.x.data(), ym.data(), point_glyph);
      // Lower panel: residuals.
      pls.vpor(0.12, 0.72, 0.12, 0.36);
      pls.wind(x_lo, x_hi, r_lo, r_hi);
      pls.col0(colour_grid);
      pls.width(0.5);
      pls.box("g", 0, 0, "g", 0, 0);
      pls.col0(1);
      const double zx[] = {x_lo, x_hi}, zy[] = {0, 0};
      pls.line(2, zx, zy);
      pls.width(1);
      pls.box("bcnst", 0, 0, "bcnstv", 0, 0);
      pls.mtex("b", 3.0, 0.5, 0.5, d.x_label.c_str());
      pls.mtex("l", 5.0, 0.5, 0.5, d.residual_label.empty() ? "model - data" : d.residual_label.c_str());
      pls.col0(first_line_colour);
      std::vector<double> rx, ry;
      for (std::size_t i = 0; i < res.size(); ++i)
        if (std::isfinite(res[i]))
          rx.push_back(d.x[i]), ry.push_back(res[i]);
      if (!rx.empty())
        pls.string(int(rx.size()), rx.data(), ry.data(), point_glyph);
      // Legend in the right margin.
      pls.vpor(0.74, 0.99, 0.12, 0.92);
      pls.wind(0, 1, 0, 1);
      int  row   = 0;
      auto entry = [&](int colour, const std::string &text) {
        pls.col0(colour);
        pls.ptex(0.02, 0.95 - 0.06 * row++, 1, 0, 0, text.c_str());
      };
      entry(first_line_colour + 1, "● measured");
      entry(first_line_colour, "— fitted model");
      if (!d.start.empty())
        entry(colour_grid, "- - start values");
      pls.col0(1);
    };
    return both_files(draw_page, stem, warnings);
  }

  std::vector<std::string>
  write_spectral_plots(const SpectralPlotData &d, const std::string &stem, std::vector<std::string> &warnings)
  {
    if (d.wavelength_nm.size() < 2 || d.curves.empty())
      {
        warnings.push_back("no spectral plot " + stem + ": fewer than two wavelengths");
        return {};
      }
    const auto [w_lo, w_hi] = padded_range(d.wavelength_nm, 0.02);
    auto draw_page          = [&](plstream &pls) {
      pls.adv(0);
      pls.schr(0, 0.85);
      pls.vpor(0.1, 0.72, 0.12, 0.9);
      pls.wind(w_lo, w_hi, 0, 1.05);
      pls.col0(colour_grid);
      pls.width(0.5);
      pls.box("g", 0, 0, "g", 0, 0);
      pls.col0(1);
      pls.width(1);
      pls.box("bcnst", 0, 0, "bcnstv", 0, 0);
      pls.mtex("b", 3.0, 0.5, 0.5, "wavelength (nm)");
      pls.mtex("l", 4.0, 0.5, 0.5, "fraction of the incident photons");
      pls.mtex("t", 1.5, 0.5, 0.5, d.title.c_str());
      for (std::size_t c = 0; c < d.curves.size(); ++c)
        {
          const auto &y = d.curves[c].second;
          if (y.size() != d.wavelength_nm.size())
            continue;
          pls.col0(first_line_colour + int(c));
          pls.width(2);
          pls.line(int(y.size()), d.wavelength_nm.data(), y.data());
        }
      // Legend in the right margin.
      pls.vpor(0.74, 0.99, 0.12, 0.9);
      pls.wind(0, 1, 0, 1);
      for (std::size_t c = 0; c < d.curves.size(); ++c)
        {
          pls.col0(first_line_colour + int(c));
          pls.ptex(0.02, 0.95 - 0.06 * double(c), 1, 0, 0, ("— " + d.curves[c].first).c_str());
        }
      pls.col0(1);
    };
    return both_files(draw_page, stem, warnings);
  }

  std::vector<std::string>
  write_film_map(const FilmMapData &d, const std::string &stem, std::vector<std::string> &warnings)
  {
    const std::size_t nx = d.x_um.size(), ny = d.y_um.size();
    if (nx < 2 || ny < 2 || d.values.size() != nx * ny)
      {
        warnings.push_back("no picture " + stem + ": no grid of values");
        return {};
      }
    const double x0 = d.x_um.front(), x1 = d.x_um.back(), y0 = d.y_um.front(), y1 = d.y_um.back();
    const double bar = 0.12 * (y1 - y0); // finger bars under the film
    // Values outside the colour range are not drawn by plimage: NaN
    // (outside the absorber) goes below it.
    std::vector<PLFLT> image(d.values);
    for (auto &v : image)
      v = std::isfinite(v) ? std::clamp(v, d.lo, d.hi) : d.lo - 1;
    std::vector<const PLFLT *> image_rows(nx), value_rows(nx);
    std::vector<PLFLT>         contour_values(d.values);
    for (auto &v : contour_values)
      if (!std::isfinite(v))
        v = d.hi;
    for (std::size_t i = 0; i < nx; ++i)
      image_rows[i] = &image[i * ny], value_rows[i] = &contour_values[i * ny];
    const int page_w = 1400, page_h = 600;
    auto draw_page = [&](plstream &pls) {
      pls.adv(0);
      pls.schr(0, 0.85);
      viridis(pls);
      // The film at the stated exaggeration: the viewport's height over
      // width in page units is (thickness x exaggeration) / width.
      const double aspect = (y1 - y0 + bar) * d.exaggeration / (x1 - x0) * page_w / page_h;
      const double vp_w = std::min(0.84, 0.5 / aspect), vp_h = vp_w * aspect;
      pls.vpor(0.5 - 0.5 * vp_w, 0.5 + 0.5 * vp_w, 0.80 - vp_h, 0.80);
      pls.wind(x0, x1, y0 - bar, y1);
      // plimagefr, not plimage: plimage stretches the colours over the data's
      // own range; the map's range is fixed (lo .. hi).
      pls.imagefr(image_rows.data(), PLINT(nx), PLINT(ny), x0, x1, y0, y1, d.lo, d.hi, d.lo, d.hi, nullptr, nullptr);
      if (d.contour)
        {
          PLcGrid grid;
          grid.xg = const_cast<PLFLT *>(d.x_um.data());
          grid.yg = const_cast<PLFLT *>(d.y_um.data());
          grid.nx = PLINT(nx), grid.ny = PLINT(ny);
          const PLFLT level = *d.contour;
          pls.col0(0);
          pls.width(2.5);
          pls.cont(value_rows.data(), PLINT(nx), PLINT(ny), 1, PLINT(nx), 1, PLINT(ny), &level, 1, pltr1, &grid);
        }
      pls.col0(colour_finger);
      for (const auto &[a, b] : d.fingers)
        {
          const double px[] = {a, b, b, a}, py[] = {y0 - bar, y0 - bar, y0, y0};
          pls.fill(4, px, py);
        }
      pls.col0(1);
      pls.width(1);
      pls.box("bcnst", 0, 0, "bcnstv", 0, 0);
      char y_label[64];
      std::snprintf(y_label, sizeof y_label, "y (µm), ×%g", d.exaggeration);
      pls.mtex("b", 3.0, 0.5, 0.5, "x (µm)");
      pls.mtex("l", 5.0, 0.5, 0.5, y_label);
      pls.mtex("t", 1.5, 0.5, 0.5, escaped(d.title).c_str());
      // Colour bar: the range as a horizontal strip below the film.
      pls.vpor(0.3, 0.7, 0.08, 0.12);
      pls.wind(d.lo, d.hi, 0, 1);
      std::vector<PLFLT>         strip(256 * 2);
      std::vector<const PLFLT *> strip_rows(256);
      for (int i = 0; i < 256; ++i)
        {
          strip[2 * i] = strip[2 * i + 1] = d.lo + (d.hi - d.lo) * i / 255.0;
          strip_rows[i]                   = &strip[2 * i];
        }
      pls.imagefr(strip_rows.data(), 256, 2, d.lo, d.hi, 0, 1, d.lo, d.hi, d.lo, d.hi, nullptr, nullptr);
      pls.col0(1);
      pls.box("bcnst", 0, 0, "bc", 0, 0);
      pls.mtex("t", 0.6, 0.5, 0.5, escaped(d.colour_label).c_str());
    };
    return both_files(draw_page, stem, warnings, page_w, page_h);
  }

  std::vector<std::string>
  write_mesh_picture(const MeshPictureData &d, const std::string &stem, std::vector<std::string> &warnings)
  {
    if (d.cells.empty())
      {
        warnings.push_back("no picture " + stem + ": no cells in the window");
        return {};
      }
    const double bar = 0.06 * (d.y_hi - d.y_lo);
    auto draw_page = [&](plstream &pls) {
      pls.adv(0);
      pls.schr(0, 0.85);
      // True scale: one micrometre is as long across as up.
      pls.vpor(0.1, 0.95, 0.1, 0.9);
      pls.wind(d.x_lo, d.x_hi, d.y_lo - bar, d.y_hi);
      pls.vpas(0.1, 0.95, 0.1, 0.9, (d.y_hi - d.y_lo + bar) / (d.x_hi - d.x_lo));
      pls.wind(d.x_lo, d.x_hi, d.y_lo - bar, d.y_hi);
      pls.col0(colour_finger);
      for (const auto &[a, b] : d.fingers)
        {
          const double px[] = {a, b, b, a}, py[] = {d.y_lo - bar, d.y_lo - bar, d.y_lo, d.y_lo};
          pls.fill(4, px, py);
        }
      pls.col0(first_line_colour);
      pls.width(0.6);
      for (const auto &c : d.cells)
        {
          const double px[] = {c[0], c[2], c[4], c[6], c[0]}, py[] = {c[1], c[3], c[5], c[7], c[1]};
          pls.line(5, px, py);
        }
      pls.col0(1);
      pls.width(1);
      pls.box("bcnst", 0, 0, "bcnstv", 0, 0);
      pls.mtex("b", 3.0, 0.5, 0.5, "x (µm)");
      pls.mtex("l", 5.0, 0.5, 0.5, "y (µm)");
      pls.mtex("t", 1.5, 0.5, 0.5, escaped(d.title).c_str());
    };
    return both_files(draw_page, stem, warnings);
  }
} // namespace backcomb::postprocess
