// Recognising database sources, hiding passwords and quoting user names
// for SQL (io/Database.hpp). The quoting rules are PostgreSQL's own
// (PostgreSQL documentation, "Lexical Structure": a quoted identifier
// doubles an inner double quote, a string constant an inner single quote);
// the libpq option syntax is libpq's ("Connection Strings": keyword = value,
// a value with blanks in single quotes with \' and \\ escapes).

#include "reachwise/io/Database.hpp"

#include <gtest/gtest.h>

using namespace reachwise::io;

TEST(Database, RecognisesPgSources) {
  EXPECT_TRUE(isDatabaseSource("PG:dbname=x"));
  EXPECT_TRUE(isDatabaseSource("pg:service=rivers"));
  EXPECT_FALSE(isDatabaseSource("PG"));
  EXPECT_FALSE(isDatabaseSource("network.gpkg"));
  EXPECT_FALSE(isDatabaseSource("./PG:x.gpkg"));
}

TEST(Database, PasswordsAreHidden) {
  EXPECT_EQ(redactedConnection("PG:dbname=x password=s3cret host=h"), "PG:dbname=x password=*** host=h");
  EXPECT_EQ(redactedConnection("PG:password = 's 3\\'cret' dbname=x"), "PG:password =*** dbname=x");
  EXPECT_EQ(redactedConnection("PG:PASSWORD=a"), "PG:PASSWORD=***");
  EXPECT_EQ(redactedConnection("PG:password=a"), "PG:password=***");
  // Only the keyword itself: a database named like it keeps its name.
  EXPECT_EQ(redactedConnection("PG:dbname=mypassword=1 user=u"), "PG:dbname=mypassword=1 user=u");
  EXPECT_EQ(redactedConnection("route PG:\"dbname=x password=p\" --out y"), "route PG:\"dbname=x password=*** --out y");
  EXPECT_EQ(redactedConnection("network.gpkg"), "network.gpkg");
}

TEST(Database, IdentifiersAndLiteralsAreQuoted) {
  EXPECT_EQ(quotedIdentifier("reachwise"), "\"reachwise\"");
  EXPECT_EQ(quotedIdentifier("a\"b; DROP TABLE t; --"), "\"a\"\"b; DROP TABLE t; --\"");
  EXPECT_EQ(quotedIdentifier("Flüsse"), "\"Flüsse\"");
  EXPECT_EQ(quotedLiteral("o'brien"), "'o''brien'");
  EXPECT_EQ(quotedLiteral("a\\b"), "'a\\b'");
}
