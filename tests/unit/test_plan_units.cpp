// Parsing sizes and durations for `lodestone plan`: accepted forms and refusals.
#include <gtest/gtest.h>

#include "plan/units.hpp"

using namespace lodestone;
using plan::parse_duration;
using plan::parse_size;

TEST(PlanUnits, Sizes) {
  EXPECT_EQ(parse_size("512M", "--x").value(), 512LL * 1024 * 1024);
  EXPECT_EQ(parse_size("64G", "--x").value(), 64LL * 1024 * 1024 * 1024);
  EXPECT_EQ(parse_size("64g", "--x").value(), 64LL * 1024 * 1024 * 1024);
  EXPECT_EQ(parse_size("64GB", "--x").value(), 64LL * 1024 * 1024 * 1024);
  EXPECT_EQ(parse_size("64GiB", "--x").value(), 64LL * 1024 * 1024 * 1024);
  EXPECT_EQ(parse_size("1.5G", "--x").value(), 3LL * 512 * 1024 * 1024);
  EXPECT_EQ(parse_size("2T", "--x").value(), 2LL * 1024 * 1024 * 1024 * 1024);
  EXPECT_EQ(parse_size("4096", "--x").value(), 4096);
  EXPECT_EQ(parse_size("8K", "--x").value(), 8192);
}

TEST(PlanUnits, BadSizesAreUsageErrors) {
  for (const char* bad : {"", "G", "64X", "-1G", "0", "0G", "1.5", "64 G", "1e3G", "64GG", "abc", "1..5G", "99999999999T"}) {
    auto r = parse_size(bad, "--node-memory");
    ASSERT_FALSE(r.is_ok()) << bad;
    EXPECT_EQ(r.status().kind(), ErrorKind::usage) << bad;
    EXPECT_NE(r.status().message().find("--node-memory"), std::string::npos) << r.status().message();
  }
}

TEST(PlanUnits, Durations) {
  EXPECT_EQ(parse_duration("02:30:00", "--x").value(), 9000);
  EXPECT_EQ(parse_duration("48:00:00", "--x").value(), 172800);
  EXPECT_EQ(parse_duration("45:10", "--x").value(), 2710);
  EXPECT_EQ(parse_duration("1-12:00:00", "--x").value(), 129600);
  EXPECT_EQ(parse_duration("90s", "--x").value(), 90);
  EXPECT_EQ(parse_duration("10m", "--x").value(), 600);
  EXPECT_EQ(parse_duration("2h", "--x").value(), 7200);
  EXPECT_EQ(parse_duration("1.5h", "--x").value(), 5400);
  EXPECT_EQ(parse_duration("1d", "--x").value(), 86400);
}

TEST(PlanUnits, BadDurationsAreUsageErrors) {
  for (const char* bad : {"", "90", "10x", "1:2:3:4", "00:60:00", "00:00:75", "1-25:00:00", "a:b:c", "::", "-5m",
                          "0s", "00:00:00", "10 m", "1-10:00"}) {
    auto r = parse_duration(bad, "--max-walltime");
    ASSERT_FALSE(r.is_ok()) << bad;
    EXPECT_EQ(r.status().kind(), ErrorKind::usage) << bad;
    EXPECT_NE(r.status().message().find("--max-walltime"), std::string::npos) << r.status().message();
  }
  // A bare number says what is missing.
  EXPECT_NE(parse_duration("90", "--x").status().message().find("unit"), std::string::npos);
}

TEST(PlanUnits, Formats) {
  EXPECT_EQ(plan::format_hms(9000), "02:30:00");
  EXPECT_EQ(plan::format_hms(172800), "48:00:00");
  EXPECT_EQ(plan::format_slurm_time(3599), "00:59:59");
  EXPECT_EQ(plan::format_slurm_time(129600), "1-12:00:00");
}
