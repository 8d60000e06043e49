# stock import and stock export round-trip (docs/interface.md): the demo shelf exported, imported
# into a fresh database (from a file, and from standard input), exported again: identical.
--db @WORK@/a.db init
--db @WORK@/a.db devices import @SRC@/data-demo/devices.csv
--db @WORK@/a.db stock import @SRC@/data-demo/stock.csv
--db @WORK@/a.db stock export > @WORK@/a.csv
--db @WORK@/b.db init
--db @WORK@/b.db devices import @SRC@/data-demo/devices.csv
--db @WORK@/b.db stock import @WORK@/a.csv
--db @WORK@/b.db stock export > @WORK@/b.csv
%same @WORK@/a.csv @WORK@/b.csv
--db @WORK@/c.db init
--db @WORK@/c.db devices import @SRC@/data-demo/devices.csv
--db @WORK@/c.db stock import - < @WORK@/a.csv
--db @WORK@/c.db stock export > @WORK@/c.csv
%same @WORK@/a.csv @WORK@/c.csv
