#include "api/host_port.h"

#include <gtest/gtest.h>

namespace seston {
namespace {

TEST(ParseHostPort, AcceptsIpv4Ipv6NamesAndEmptyHost) {
  EXPECT_EQ(ParseHostPort("127.0.0.1:7460")->host, "127.0.0.1");
  EXPECT_EQ(ParseHostPort("127.0.0.1:7460")->port, 7460);
  EXPECT_EQ(ParseHostPort("[::1]:80")->host, "::1");
  EXPECT_EQ(ParseHostPort("localhost:0")->port, 0);
  EXPECT_EQ(ParseHostPort(":7460")->host, "127.0.0.1");
}

TEST(ParseHostPort, RejectsMissingOrBadPortAndBareIpv6) {
  for (const char* text :
       {"127.0.0.1", "127.0.0.1:", "127.0.0.1:65536", "host:http", "::1:80", "[::1:80", "[]:80"}) {
    Result<HostPort> parsed = ParseHostPort(text);
    ASSERT_FALSE(parsed.ok()) << text;
    EXPECT_NE(parsed.status().message().find("HOST:PORT"), std::string::npos);
  }
}

}  // namespace
}  // namespace seston
