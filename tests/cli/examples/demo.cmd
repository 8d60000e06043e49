# The demo needs no setup: HOME is an empty folder and SHELFSTAGE_DB is unset. It leaves no
# temporary database behind and does not create the user's own database. Its output (the
# shelf, a design with timings, the pick list) is checked in cli/cmd_demo_test.cpp; here
# only that it runs cleanly, prints nothing on stderr, and leaves nothing behind.
demo > @WORK@/demo.txt
%absent @WORK@/tmp/*
%absent @WORK@/home/.local/share/shelfstage/*
demo --json > @WORK@/demo.json
%absent @WORK@/tmp/*
%absent @WORK@/home/.local/share/shelfstage/*
