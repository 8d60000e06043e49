# Every write to standard output is checked (/dev/full fails each write with "No space left on
# device", Linux null(4)). Reading commands then exit 1 with the reason. A command that has
# already changed the stock exits 0 with a warning instead: the change is made, once, and a
# script that retried on a non-zero status would make it twice.
--db @DB@ init
--db @DB@ stock import @EXAMPLES@/mixed_notation.csv
--db @DB@ stock export > /dev/full
--db @DB@ --json stock list > /dev/full
--db @DB@ stock add R 10k 5 --bin A7 > /dev/full
--db @DB@ --json stock adjust R:6k8 -2 --reason "used in a repair" > /dev/full
--db @DB@ stock list --kind R
# A file named with -o or --spice is replaced whole; a device, folder or fifo is refused and
# nothing is written (the device stays a device).
--db @DB@ devices add SJ-101 --kind NJFET --idss 1m..5m --vp -0.5..-3
--db @DB@ analyze jfet-cs-self --device SJ-101 --supply 12 --load 10k --part RG=1M --part RD=4k7 --part CIN=100n --part COUT=1u --spice /dev/null
--db @DB@ analyze jfet-cs-self --device SJ-101 --supply 12 --load 10k --part RG=1M --part RD=4k7 --part CIN=100n --part COUT=1u --spice @WORK@
--db @DB@ analyze jfet-cs-self --device SJ-101 --supply 12 --load 10k --part RG=1M --part RD=4k7 --part CIN=100n --part COUT=1u --spice @WORK@/no/such/folder/stage.cir
%absent @WORK@/.*.tmp
