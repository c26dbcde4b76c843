// Durations on the command line: every accepted form and clear refusals.
#include <gtest/gtest.h>

#include "state/duration.hpp"

using lodestone::state::parse_duration;

TEST(StopDuration, AcceptedForms) {
  EXPECT_EQ(parse_duration("90s").value(), 90);
  EXPECT_EQ(parse_duration("10m").value(), 600);
  EXPECT_EQ(parse_duration("1h30m").value(), 5400);
  EXPECT_EQ(parse_duration("2d").value(), 172800);
  EXPECT_EQ(parse_duration("1h0m5s").value(), 3605);
  EXPECT_EQ(parse_duration("1.5h").value(), 5400);
  EXPECT_EQ(parse_duration("0.5s").value(), 0.5);
  EXPECT_EQ(parse_duration("01:30:00").value(), 5400);
  EXPECT_EQ(parse_duration("00:00:45").value(), 45);
  EXPECT_EQ(parse_duration("100:00:00").value(), 360000);
  EXPECT_EQ(parse_duration("1-00:00:10").value(), 86410);
}

TEST(StopDuration, Refusals) {
  const char* bad[] = {"", "90", "10x", "m", "1m1h", "1h1h", "-5m", "0s", "00:00:00", "1:2", "01:60:00",
                       "1:2:3:4", "a:b:c", "1.2.3s", "10 m"};
  for (const char* text : bad) {
    auto r = parse_duration(text, "--time-budget");
    ASSERT_FALSE(r.is_ok()) << "accepted '" << text << "'";
    EXPECT_EQ(r.status().kind(), lodestone::ErrorKind::usage);
    EXPECT_NE(r.status().message().find("--time-budget"), std::string::npos) << r.status().message();
    EXPECT_NE(r.status().message().find("1h30m"), std::string::npos) << r.status().message();
  }
  EXPECT_NE(parse_duration("90", "--checkpoint-every").status().message().find("needs a unit"), std::string::npos);
  // Numbers past a double's range, either way, are refused as usage errors (they used to escape as exceptions).
  const std::string huge(400, '9'), tiny = "0." + std::string(400, '0') + "1";
  for (const std::string& text : {huge + "s", tiny + "s", huge + "-00:00:01"}) {
    auto r = parse_duration(text, "--time-budget");
    ASSERT_FALSE(r.is_ok()) << "accepted '" << text << "'";
    EXPECT_EQ(r.status().kind(), lodestone::ErrorKind::usage);
  }
  EXPECT_NE(parse_duration(huge + "s", "--time-budget").status().message().find("too long"), std::string::npos);
}
