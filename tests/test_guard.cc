// Issue "never a wrong number with exit 0": text at the edge (UTF-8, byte
// order mark), messages that name the cause (nearest names, allowed values),
// the folder lock, the fingerprint that ties a result to its case, and the
// physical bounds of the results (simulator/bounds.h).
#include "base/files.h"
#include "base/text.h"
#include "fem/optics.h"
#include "simulator/bounds.h"
#include "simulator/case_file.h"
#include "simulator/case_run.h"
#include "study/layout.h"
#include "study/plan.h"
#include "study/rows.h"
#include "study/study.h"
#include "input_error.h"
#include "temp_folder.h"

#include <gtest/gtest.h>
#include <nlohmann/json.hpp>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>

using namespace backcomb;
using backcomb::test_support::fresh_folder;
using backcomb::test_support::input_error_message;
namespace fs = std::filesystem;

namespace
{
  const std::string tiny = BACKCOMB_TEST_SOURCE_DIR "/sweep_tiny.prm";

  std::string
  read_text(const fs::path &p)
  {
    std::ifstream      in(p, std::ios::binary);
    std::ostringstream s;
    s << in.rdbuf();
    return s.str();
  }

  void
  write_text(const fs::path &p, const std::string &text)
  {
    std::ofstream(p, std::ios::binary) << text;
  }

  simulator::RunOptions
  quiet_into(const fs::path &folder)
  {
    simulator::RunOptions o;
    o.folder = folder.string();
    o.quiet  = true;
    return o;
  }
} // namespace

// ------------------------------------------------------------------ text

TEST(Utf8, FindsTheFirstInvalidByte)
{
  EXPECT_FALSE(first_invalid_utf8("plain ASCII"));
  EXPECT_FALSE(first_invalid_utf8("\xC2\xB5m, \xE2\x82\xAC, \xF0\x9F\x98\x80")); // µ, €, an emoji
  EXPECT_EQ(first_invalid_utf8("# strip in \xB5m"), 11u);                     // Latin-1 micro sign
  EXPECT_EQ(first_invalid_utf8("ab\xC0\xAF"), 2u);                            // overlong '/'
  EXPECT_EQ(first_invalid_utf8("\xED\xA0\x80"), 0u);                          // surrogate half
  EXPECT_EQ(first_invalid_utf8("\xF4\x90\x80\x80"), 0u);                      // above U+10FFFF
  EXPECT_EQ(first_invalid_utf8("x\xE2\x82"), 1u);                             // cut short
  EXPECT_EQ(escape_invalid_utf8("a\xB5" "b\xC2\xB5"), "a\\xB5b\xC2\xB5");
  // A JSON dump of the escaped text cannot fail.
  EXPECT_NO_THROW(nlohmann::json(escape_invalid_utf8("\xFF\xFE")).dump());
}

// Reproduction of the issue: a Latin-1 "µ" in a comment ended a finished
// solve with exit 5 and no summary. It is now refused before any work,
// naming the file, line, byte and offset.
TEST(Utf8, CaseFileWithLatin1ByteIsRefusedAtTheEdge)
{
  const std::string  text = "# strip length in \xB5m\n" + read_text(tiny);
  std::istringstream in(text);
  const std::string  m = input_error_message([&] { simulator::read_case(in, "x.prm", {}); });
  EXPECT_NE(m.find("x.prm:1: byte 0xB5 at offset 18 (column 19) is not UTF-8"), std::string::npos) << m;
  EXPECT_NE(m.find("save the file as UTF-8"), std::string::npos) << m;
  // The message itself is valid UTF-8 (it may go into failed.json).
  EXPECT_FALSE(first_invalid_utf8(m));

  std::istringstream line3("# ok\n#\n  set Gap = 5 # 5 \xE9tats\n");
  EXPECT_NE(input_error_message([&] { simulator::read_case(line3, "y.prm", {}); }).find("y.prm:3: byte 0xE9 at offset 25 (column 19)"),
            std::string::npos);
}

TEST(Utf8, OverrideWithLatin1ByteIsRefused)
{
  const std::string m = input_error_message([] { simulator::read_case(tiny, {"Output/Folder=r\xE9sultats"}); });
  EXPECT_NE(m.find("--set 'Output/Folder=r\\xE9sultats': byte 0xE9 at offset 15"), std::string::npos) << m;
}

TEST(Utf8, ByteOrderMarkIsAccepted)
{
  std::istringstream in("\xEF\xBB\xBF" + read_text(tiny));
  const simulator::Case c = simulator::read_case(in, "bom.prm", {});
  EXPECT_EQ(c.echo, read_text(tiny)); // the mark is not part of the text
  EXPECT_EQ(c.geometry.strip_length_um, 1.0);
  // Only at the start: elsewhere the three bytes are an entry's text.
  std::istringstream middle("subsection Geometry\n\xEF\xBB\xBF  set Gap = 5\nend\n");
  EXPECT_NE(input_error_message([&] { simulator::read_case(middle, "m.prm", {}); }), "");
}

// ------------------------------------------------------------- messages

TEST(Messages, UnknownEntryAndSectionSuggestTheNearestNames)
{
  std::istringstream entry("subsection Geometry\n  set Gapp = 5\nend\n");
  std::string        m = input_error_message([&] { simulator::read_case(entry, "e.prm", {}); });
  EXPECT_NE(m.find("Gapp"), std::string::npos) << m;
  EXPECT_NE(m.find("did you mean 'Gap'"), std::string::npos) << m;

  std::istringstream nested("subsection Absorber\n subsection Transport\n  set Electron mobilty = 5\n end\nend\n");
  m = input_error_message([&] { simulator::read_case(nested, "n.prm", {}); });
  EXPECT_NE(m.find("did you mean 'Electron mobility'"), std::string::npos) << m;

  std::istringstream section("subsection Geometri\n  set Gap = 5\nend\n");
  m = input_error_message([&] { simulator::read_case(section, "s.prm", {}); });
  EXPECT_NE(m.find("did you mean 'Geometry'"), std::string::npos) << m;

  m = input_error_message([] { simulator::read_case(tiny, {"Geometry/Gapp=5"}); });
  EXPECT_NE(m.find("unknown entry 'Gapp' (did you mean 'Gap'"), std::string::npos) << m;
  m = input_error_message([] { simulator::read_case(tiny, {"Illumintion/Intensity=1"}); });
  EXPECT_NE(m.find("unknown section 'Illumintion' (did you mean 'Illumination'"), std::string::npos) << m;
  // Nothing close: the names that exist there.
  m = input_error_message([] { simulator::read_case(tiny, {"Device/Colour=blue"}); });
  EXPECT_NE(m.find("unknown entry 'Colour' (entries of section 'Device': 'Active area', 'Temperature')"), std::string::npos) << m;
}

TEST(Messages, SelectionValueListsTheAllowedValues)
{
  std::istringstream in("subsection Device\n  set Active area = fingers\nend\n");
  std::string        m = input_error_message([&] { simulator::read_case(in, "a.prm", {}); });
  EXPECT_NE(m.find("allowed values: 'gap', 'period'"), std::string::npos) << m;
  m = input_error_message([] { simulator::read_case(tiny, {"J-V scan/Direction=sideways"}); });
  EXPECT_NE(m.find("value not allowed here; allowed values: 'forward', 'reverse'"), std::string::npos) << m;
}

// A lit case that absorbs nothing is refused before any work, with the
// cause, instead of failing later as "did not converge".
TEST(Messages, NothingAbsorbedIsNamed)
{
  const fs::path  dir = fresh_folder("nothing-absorbed");
  simulator::Case c   = simulator::read_case(tiny, {"Illumination/Generation model=spectrum",
                                                     "Absorber/Bands and permittivity/Band gap=5"});
  const std::string m = input_error_message([&] { simulator::run_solve(c, quiet_into(dir / "out")); });
  EXPECT_NE(m.find("nothing is absorbed: no photon of the spectrum"), std::string::npos) << m;
  EXPECT_NE(m.find("is above the absorber's band gap 5 eV"), std::string::npos) << m;
  EXPECT_FALSE(fs::exists(dir / "out"));
}

// ------------------------------------------------------------ the lock

TEST(FolderLock, SecondRunIntoTheSameFolderIsRefused)
{
  const fs::path dir = fresh_folder("lock");
  {
    FolderLock        first(dir.string());
    const std::string m = input_error_message([&] { FolderLock second(dir.string()); });
    EXPECT_NE(m.find("is in use by another backcomb run (process "), std::string::npos) << m;

    // A solve into the locked folder stops before it changes anything: the
    // other run's summary stays.
    write_text(dir / "summary.json", "{\"other\": true}\n");
    const simulator::Case c = simulator::read_case(tiny, {});
    EXPECT_NE(input_error_message([&] { simulator::run_solve(c, quiet_into(dir)); }).find("is in use"), std::string::npos);
    EXPECT_EQ(read_text(dir / "summary.json"), "{\"other\": true}\n");
  }
  EXPECT_NO_THROW(FolderLock again(dir.string())); // released with its owner
}

// ------------------------------------------------------- fingerprints

TEST(Fingerprint, TellsCaseTextOverridesAndTheirOrderApart)
{
  const std::string a = result_fingerprint("text", {"A/b=1", "A/c=2"});
  EXPECT_EQ(a.size(), 16u);
  EXPECT_EQ(a, result_fingerprint("text", {"A/b=1", "A/c=2"}));
  EXPECT_NE(a, result_fingerprint("text ", {"A/b=1", "A/c=2"}));
  EXPECT_NE(a, result_fingerprint("text", {"A/c=2", "A/b=1"}));
  EXPECT_NE(a, result_fingerprint("text", {"A/b=1A/c=2"}));
  EXPECT_NE(result_fingerprint("ab", {}), result_fingerprint("a", {"b"}));
}

// A finished solve whose case file has a Latin-1 byte in its *name* keeps
// its results: summary.json is written (valid UTF-8, the byte replaced),
// with the fingerprint of the case.
TEST(Fingerprint, SolveWritesItAndSurvivesALatin1FileName)
{
  const fs::path dir  = fresh_folder("latin1-name");
  const fs::path file = dir / "strip-\xB5m.prm";
  fs::copy_file(tiny, file);
  const simulator::Case c = simulator::read_case(file.string(), {"Geometry/Strip length=0.8"});
  EXPECT_EQ(simulator::run_solve(c, quiet_into(dir / "out")), exit_ok);
  const std::string text = read_text(dir / "out" / "summary.json");
  EXPECT_FALSE(first_invalid_utf8(text));
  const nlohmann::json s = nlohmann::json::parse(text);
  EXPECT_EQ(s["fingerprint"], result_fingerprint(c.echo, c.overrides));
  EXPECT_NE(s["case_file"].get<std::string>().find("strip-\xEF\xBF\xBDm.prm"), std::string::npos); // U+FFFD
  EXPECT_EQ(s["status"], "converged");
  EXPECT_TRUE(s["bounds"].is_array());
  EXPECT_TRUE(fs::exists(dir / "out" / "jv.csv"));
}

// A summary.json copied from another case, or without a fingerprint, is
// not taken as this case's result: the row is failed, names the case and
// the reason, and carries none of the foreign numbers.
TEST(Fingerprint, MergeRefusesASummaryOfAnotherCase)
{
  const fs::path        dir  = fresh_folder("foreign-summary");
  const study::StudyPlan plan = study::make_plan(tiny, {}, {"Geometry/Strip length=0.5,1"});
  ASSERT_EQ(plan.cases.size(), 2u);
  const auto &a = plan.cases[0], &b = plan.cases[1];
  for (const auto &c : plan.cases)
    {
      fs::create_directories(study::case_folder(dir.string(), c.id));
      nlohmann::json s = {{"status", "converged"},
                          {"fingerprint", c.fingerprint},
                          {"metrics", {{"PCE_percent", c.id == a.id ? 1.5 : 2.5}}}};
      write_text(study::case_folder(dir.string(), c.id) + "/summary.json", s.dump());
    }
  EXPECT_EQ(study::read_row(dir.string(), a).PCE, 1.5);
  EXPECT_EQ(study::read_row(dir.string(), b).PCE, 2.5);

  // b's summary copied over a's.
  fs::copy_file(study::case_folder(dir.string(), b.id) + "/summary.json",
                study::case_folder(dir.string(), a.id) + "/summary.json", fs::copy_options::overwrite_existing);
  const study::StudyRow r = study::read_row(dir.string(), a);
  EXPECT_EQ(r.status, Status::failed);
  EXPECT_FALSE(r.PCE);
  EXPECT_NE(r.reason.find("does not belong to case " + a.id), std::string::npos) << r.reason;
  EXPECT_NE(r.reason.find("recomputes it"), std::string::npos) << r.reason;

  write_text(study::case_folder(dir.string(), a.id) + "/summary.json", R"({"status": "converged"})");
  EXPECT_NE(study::read_row(dir.string(), a).reason.find("carries no fingerprint"), std::string::npos);

  // The plan read back computes the same fingerprints.
  const study::StudyPlan back = study::plan_from_json(study::plan_to_json(plan), "p.json");
  EXPECT_EQ(back.cases[1].fingerprint, b.fingerprint);
}

// Reproduction: a summary.json copied from another case made that row show
// the other case's numbers, exit 0. Now merge reports the case as failed
// with the reason (exit 3), and the sweep run again recomputes it, after
// which the table is whole again.
TEST(Fingerprint, SweepRecomputesACopiedSummary)
{
  const fs::path         dir  = fresh_folder("copied-summary");
  const study::StudyPlan plan = study::make_plan(tiny, {}, {"Geometry/Strip length=0.8,1"});
  study::StudyOptions    o;
  o.folder = (dir / "out").string();
  o.quiet  = true;
  ASSERT_EQ(study::run_study(plan, o), exit_ok);
  const std::string a = study::case_folder(o.folder, plan.cases[0].id) + "/summary.json";
  const std::string b = study::case_folder(o.folder, plan.cases[1].id) + "/summary.json";
  const std::string own_a = read_text(a);
  fs::copy_file(b, a, fs::copy_options::overwrite_existing);

  EXPECT_EQ(study::merge_study(o.folder, true), exit_no_convergence);
  const std::string csv = read_text(dir / "out" / "sweep.csv");
  EXPECT_NE(csv.find("does not belong to case " + plan.cases[0].id), std::string::npos) << csv;

  // The sweep run again (no --retry-failed needed) recomputes the case.
  EXPECT_EQ(study::run_study(plan, o), exit_ok);
  const nlohmann::json again = nlohmann::json::parse(read_text(a));
  EXPECT_EQ(again["fingerprint"], plan.cases[0].fingerprint);
  EXPECT_EQ(again["metrics"]["Jsc_mA_per_cm2"], nlohmann::json::parse(own_a)["metrics"]["Jsc_mA_per_cm2"]);
}

// ------------------------------------------------------- physical bounds

// The detailed-balance limit against the table of S. Rühle, "Tabulated
// values of the Shockley-Queisser limit for single junction solar cells",
// Solar Energy 130 (2016) 139, for AM1.5G (ASTM G173-03, 1000 W/m2) at
// 300 K: the maximum, 33.7 % near E_g = 1.34 eV, and 32.9 % at 1.1 eV
// (both values from memory).
TEST(DetailedBalance, MatchesThePublishedLimitUnderAM15G)
{
  const fem::Spectrum s = fem::read_spectrum(fs::path(BACKCOMB_SOURCE_DIR) / "data" / "astm-g173-03.csv");
  const double incident = 0.1 * fem::integrate_trapezoid(s.wavelength_nm, s.irradiance); // mW/cm2
  EXPECT_NEAR(incident, 100.04, 0.1); // ASTM G173-03 global tilt: 1000.4 W/m2
  const auto pce = [&](double eg) {
    const double jph = fem::photon_current_mA_per_cm2(fem::above_gap_spectrum(s, eg));
    return 100 * simulator::detailed_balance_limit(jph, eg, 300).Pmax / incident;
  };
  EXPECT_NEAR(pce(1.34), 33.7, 0.3);
  EXPECT_NEAR(pce(1.1), 32.9, 0.5);
  // Voc_SQ = kT/q ln(Jsc/J0 + 1) by construction; independently, the
  // radiative J0 falls by exp(-dEg/kT) (times the E^2 prefactor) with the gap.
  const auto   d1 = simulator::detailed_balance_limit(30, 1.3, 300), d2 = simulator::detailed_balance_limit(30, 1.4, 300);
  const double kT = 300 * 1.380649e-23 / 1.602176634e-19;
  EXPECT_NEAR(std::log(d1.J0 / d2.J0), 0.1 / kT - 2 * std::log(1.4 / 1.3), 0.02);
}

namespace
{
  simulator::ResultFigures
  plausible()
  {
    simulator::ResultFigures r;
    r.band_gap_eV                 = 1.6;
    r.temperature_K               = 300;
    r.incident_mW_per_cm2         = 100;
    r.photon_current_mA_per_cm2   = 25;
    r.absorbed_current_mA_per_cm2 = 20;
    r.Jsc                         = 19;
    r.Voc                         = 1.1;
    r.Pmax                        = 17;
    return r;
  }

  // The checks that a figure set trips, as "key" or "key!" (violated).
  std::string
  tripped(const simulator::ResultFigures &r)
  {
    std::string out;
    for (const auto &f : simulator::check_bounds(r))
      out += (out.empty() ? "" : " ") + f.check + (f.violated ? "!" : "");
    return out;
  }
} // namespace

TEST(Bounds, EachBoundTripsJustOutsideAndNotJustInside)
{
  EXPECT_EQ(tripped(plausible()), "");

  auto r = plausible();
  r.absorbed_current_mA_per_cm2 = 25 * (1 + 2e-6);
  EXPECT_EQ(tripped(r), "absorbed_photons!");
  r.absorbed_current_mA_per_cm2 = 25;
  EXPECT_EQ(tripped(r), "");

  r     = plausible();
  r.Voc = 1.6;
  EXPECT_EQ(tripped(r), "voc_band_gap!");
  r.Voc = 1.6 - 1e-9;
  EXPECT_EQ(tripped(r), "");

  const double sq = simulator::detailed_balance_limit(25, 1.6, 300).Pmax;
  r               = plausible();
  r.Pmax          = sq * (1 + 2e-6);
  EXPECT_EQ(tripped(r), "pce_detailed_balance!");
  r.Pmax = sq * (1 - 1e-9);
  EXPECT_EQ(tripped(r), "");

  r              = plausible();
  r.active_scale = 10.01;
  r.Jsc          = 2, r.Pmax = 1;
  EXPECT_EQ(tripped(r), "active_width");
  r.active_scale = 10;
  EXPECT_EQ(tripped(r), "");

  r              = plausible();
  r.active_scale = 25.0 / 19 * (1 + 2e-6);
  EXPECT_EQ(tripped(r), "per_active_photons");
  r.active_scale = 25.0 / 19;
  EXPECT_EQ(tripped(r), "");

  r              = plausible();
  r.active_scale = sq / 17 * (1 + 2e-6);
  r.Jsc          = 1;
  EXPECT_EQ(tripped(r), "per_active_detailed_balance");
  r.active_scale = sq / 17 * (1 - 1e-9);
  EXPECT_EQ(tripped(r), "");

  r                  = plausible();
  r.degeneracy       = 1.001;
  r.degeneracy_where = "electron density ... at x = 1 um";
  EXPECT_EQ(tripped(r), "boltzmann");
  EXPECT_NE(simulator::check_bounds(r)[0].message.find("at x = 1 um"), std::string::npos);
  r.degeneracy = 0.999;
  EXPECT_EQ(tripped(r), "");
}

TEST(Bounds, SpectrumIntegralNamesTheUnitThatFits)
{
  EXPECT_FALSE(simulator::spectrum_intensity_check("s.csv", 1.0004));
  EXPECT_FALSE(simulator::spectrum_intensity_check("s.csv", 1.25));
  EXPECT_FALSE(simulator::spectrum_intensity_check("s.csv", 0.8));
  const auto dim = simulator::spectrum_intensity_check("s.csv", 0.79);
  ASSERT_TRUE(dim);
  EXPECT_FALSE(dim->violated);
  const auto ten = simulator::spectrum_intensity_check("s.csv", 10);
  ASSERT_TRUE(ten);
  EXPECT_FALSE(ten->violated);
  const auto per_um = simulator::spectrum_intensity_check("s.csv", 1000.4);
  ASSERT_TRUE(per_um);
  EXPECT_TRUE(per_um->violated);
  EXPECT_NE(per_um->message.find("fit the unit W m-2 um-1"), std::string::npos) << per_um->message;
  EXPECT_TRUE(simulator::spectrum_intensity_check("s.csv", 10.01)->violated);
  EXPECT_NE(simulator::spectrum_intensity_check("s.csv", 0.1)->message.find("mW cm-2 nm-1"), std::string::npos);
}

namespace
{
  // The shipped spectrum with its irradiance times `factor`, as a
  // two-column file.
  fs::path
  scaled_spectrum(const fs::path &dir, const double factor)
  {
    const fem::Spectrum s = fem::read_spectrum(fs::path(BACKCOMB_SOURCE_DIR) / "data" / "astm-g173-03.csv");
    std::ostringstream  out;
    out.precision(10);
    out << "wavelength_nm,irradiance\n";
    for (std::size_t i = 0; i < s.wavelength_nm.size(); ++i)
      out << s.wavelength_nm[i] << "," << factor * s.irradiance[i] << "\n";
    const fs::path p = dir / ("spectrum-x" + std::to_string(factor) + ".csv");
    write_text(p, out.str());
    return p;
  }
} // namespace

// Reproduction: a spectrum in W m-2 um-1 gave PCE 41,022 % with exit 0. It
// is now refused before any work; a dim spectrum runs, with a warning, and
// its PCE is divided by the power integrated from that file.
TEST(Bounds, PceFromThePowerOfTheSpectrumUsed)
{
  const fs::path dir = fresh_folder("spectrum-power");
  const std::vector<std::string> spectrum_model = {"Illumination/Generation model=spectrum"};

  auto  wrong = spectrum_model;
  wrong.push_back("Illumination/Spectrum file=" + scaled_spectrum(dir, 1000).string());
  const simulator::Case c_wrong = simulator::read_case(tiny, wrong);
  const std::string     m = input_error_message([&] { simulator::run_solve(c_wrong, quiet_into(dir / "wrong")); });
  EXPECT_NE(m.find("fit the unit W m-2 um-1"), std::string::npos) << m;
  EXPECT_FALSE(fs::exists(dir / "wrong"));

  auto dim = spectrum_model;
  const fs::path half = scaled_spectrum(dir, 0.5);
  dim.push_back("Illumination/Spectrum file=" + half.string());
  const simulator::Case c = simulator::read_case(tiny, dim);
  EXPECT_EQ(simulator::run_solve(c, quiet_into(dir / "dim")), exit_ok);
  const nlohmann::json s   = nlohmann::json::parse(read_text(dir / "dim" / "summary.json"));
  const fem::Spectrum  sp  = fem::read_spectrum(half);
  const double         pin = 0.1 * fem::integrate_trapezoid(sp.wavelength_nm, sp.irradiance);
  EXPECT_NEAR(s["incident_power_mW_per_cm2"].get<double>(), pin, 1e-9 * pin);
  EXPECT_NEAR(pin, 50.02, 0.05);
  const double pmax = s["metrics"]["Pmax_mW_per_cm2"].get<double>();
  EXPECT_NEAR(s["metrics"]["PCE_percent"].get<double>(), 100 * pmax / pin, 1e-9);
  bool warned = false;
  for (const auto &w : s["warnings"])
    warned = warned || w.get<std::string>().find("integrates to 500.2 W/m2") != std::string::npos;
  EXPECT_TRUE(warned) << s["warnings"].dump();
}

// Reproduction: a strip under generation no sunlight can give reported
// V_oc above the band gap with exit 0. The results are written in full,
// with the findings in summary.json, and the exit code is 6.
TEST(Bounds, ImpossibleResultEndsWithExitCodeSix)
{
  const fs::path        dir = fresh_folder("impossible");
  const simulator::Case c   = simulator::read_case(tiny, {"Illumination/Uniform generation rate=1e25"});
  EXPECT_EQ(simulator::run_solve(c, quiet_into(dir)), exit_bounds);
  const nlohmann::json s = nlohmann::json::parse(read_text(dir / "summary.json"));
  std::string          checks;
  for (const auto &b : s["bounds"])
    checks += b["check"].get<std::string>() + (b["violated"].get<bool>() ? "! " : " ");
  EXPECT_NE(checks.find("absorbed_photons!"), std::string::npos) << checks;
  EXPECT_TRUE(fs::exists(dir / "jv.csv"));
  EXPECT_TRUE(s["metrics"]["Voc_V"].is_number()); // nothing computed is withheld
}
