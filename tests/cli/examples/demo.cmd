# The demo needs no setup: HOME is an empty folder and SHELFSTAGE_DB is unset. It leaves no
# temporary database behind and does not create the user's own database.
demo
%absent @WORK@/tmp/*
%absent @WORK@/home/.local/share/shelfstage/*
