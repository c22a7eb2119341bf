# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# Turn the demo CSV files into C strings: one entry per file, named by its base name.
BEGIN { print "/* Generated from the CSV files in db/demo by tests/embed.awk; do not edit. */"
        print "#include <stddef.h>"
        print "#include \"cli.h\""
        print "const struct demo_file demo_files[] = {" }
FNR == 1 { if (NR > 1) print "    },"; n = FILENAME; sub(/.*\//, "", n); printf "    { \"%s\",\n", n }
{ gsub(/\\/, "\\\\"); gsub(/"/, "\\\""); printf "      \"%s\\n\"\n", $0 }
END { if (NR > 0) print "    },"; print "    { NULL, NULL }"; print "};" }
