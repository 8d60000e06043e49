# init creates an empty database and refuses to overwrite one (exit 1, docs/interface.md),
# naming the path.
# Without --db or $SHELFSTAGE_DB the file goes to ~/.local/share/shelfstage/ (XDG Base
# Directory Specification default for XDG_DATA_HOME).
init
init
--db @DB@ init
init --db @DB@
