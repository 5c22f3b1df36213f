#include <catch2/catch.hpp>
#include <cmath>
#include <random>
#include <vector>

#include "loopaudit/record/jackknife.hpp"
#include "reference_data.hpp"
#include "spectral/group_sums.hpp"

using namespace loopaudit;

namespace {

std::vector<double> leave_one_out_means(const std::vector<double>& x) {
  double total = 0.0;
  for (double v : x) total += v;
  std::vector<double> out;
  for (double v : x) out.push_back((total - v) / static_cast<double>(x.size() - 1));
  return out;
}

}  // namespace

TEST_CASE("the jackknife of the sample mean is s^2/n with no bias", "[record][jackknife]") {
  // Efron and Tibshirani, An Introduction to the Bootstrap (1993), ch. 11:
  // for the mean, var_jack = s^2 / n (s^2 the unbiased sample variance) and
  // bias_jack = 0, exactly, whatever the data.
  std::mt19937_64 rng(7);
  std::lognormal_distribution<double> skewed(0.0, 1.0);
  for (const std::size_t n : {2u, 3u, 10u, 57u}) {
    std::vector<double> x;
    for (std::size_t i = 0; i < n; ++i) x.push_back(skewed(rng));
    double mean = 0.0;
    for (double v : x) mean += v / static_cast<double>(n);
    double s2 = 0.0;
    for (double v : x) s2 += (v - mean) * (v - mean) / static_cast<double>(n - 1);
    const JackknifeEstimate jk = jackknife(mean, leave_one_out_means(x));
    CHECK(jk.variance == Approx(s2 / static_cast<double>(n)).epsilon(1e-12));
    CHECK(jk.bias == Approx(0.0).margin(1e-12 * (1.0 + std::abs(mean))));
    CHECK(jk.degrees_of_freedom == Approx(static_cast<double>(n - 1)));
  }
}

TEST_CASE("the jackknife removes the bias of the plug-in variance", "[record][jackknife]") {
  // The plug-in variance (1/n) sum (x - mean)^2 has bias -sigma^2/n; its
  // jackknife correction gives the unbiased s^2 exactly (Efron and
  // Tibshirani 1993, ch. 11, the jackknife estimate of bias).
  const std::vector<double> x{1.0, 4.0, 2.5, -3.0, 7.25, 0.5};
  const auto plug_in = [](const std::vector<double>& v) {
    double m = 0.0;
    for (double e : v) m += e / static_cast<double>(v.size());
    double s = 0.0;
    for (double e : v) s += (e - m) * (e - m) / static_cast<double>(v.size());
    return s;
  };
  std::vector<double> replicates;
  for (std::size_t i = 0; i < x.size(); ++i) {
    std::vector<double> rest = x;
    rest.erase(rest.begin() + static_cast<std::ptrdiff_t>(i));
    replicates.push_back(plug_in(rest));
  }
  const double full = plug_in(x);
  const double unbiased = full * static_cast<double>(x.size()) / static_cast<double>(x.size() - 1);
  CHECK(full - jackknife(full, replicates).bias == Approx(unbiased).epsilon(1e-12));
}

TEST_CASE("the jackknife refuses fewer than two replicates", "[record][jackknife]") {
  const std::vector<double> one{1.0};
  CHECK_THROWS_AS(jackknife(1.0, one), std::invalid_argument);
}

TEST_CASE("Student's t quantiles match scipy.stats.t.ppf", "[record][jackknife]") {
  // data/reference/student_t.csv: the root of scipy.stats.t.cdf, 12 digits.
  const reference::Table table("student_t.csv");
  REQUIRE(table.rows().size() >= 40);
  for (const auto& row : table.rows()) {
    const double p = row.number("probability"), dof = row.number("degrees_of_freedom");
    INFO("p " << p << ", " << dof << " degrees of freedom");
    CHECK(student_t_quantile(p, dof) == Approx(row.number("t")).epsilon(1e-11));
    CHECK(student_t_quantile(1.0 - p, dof) == Approx(-row.number("t")).epsilon(1e-11));
  }
  CHECK(two_sided_t(0.95, 7.0) == Approx(table.row_where({{"probability", "0.975"}, {"degrees_of_freedom", "7"}}).number("t")).epsilon(1e-9));
  CHECK(student_t_quantile(0.975, INFINITY) == Approx(1.959963984540054).epsilon(1e-12));  // scipy.stats.norm.ppf(0.975)
}

TEST_CASE("group sums merge in pairs and keep every average once", "[record][jackknife]") {
  // 100 averages into at most 8 groups: groups of 16 (after merges at 9, 17,
  // 33, 65 averages... each doubling the group), 6 full ones and a remainder
  // of 4, under half a group, merged into the one before.
  detail::GroupSums sums(1, 3, 8);
  std::complex<double> total = 0.0;
  for (std::size_t i = 0; i < 100; ++i) {
    sums.make_room(i);
    auto& lines = sums.at(sums.group_of(i), 0);
    for (std::size_t k = 0; k < 3; ++k) lines[k] += std::complex<double>(static_cast<double>(i), static_cast<double>(k));
    total += static_cast<double>(i);
  }
  REQUIRE(sums.per_group() == 16);
  const auto groups = sums.finish(100);
  REQUIRE(groups.size() == 6);
  std::complex<double> summed = 0.0;
  for (const auto& g : groups) summed += g[0][0];
  CHECK(summed == total);
  // The first group holds averages 0..15: their sum is 120; the last 80..99.
  CHECK(groups.front()[0][0].real() == 120.0);
  CHECK(groups.back()[0][0].real() == Approx(1790.0));
  CHECK(groups.back()[0][2].imag() == Approx(2.0 * 20.0));
}
