# analyze: a stage given part by part, with a measured piece from the demo shelf (J1 of SJ-101,
# data-demo/pieces.csv). Both evaluators where they differ by more than 1 %, the stress of each
# part against the rating given (COUT rated 6.3 V holds more: a warning, exit 0), the corners.
demo --db @DB@ --json > @WORK@/demo.json
--db @DB@ analyze jfet-cs-self --device SJ-101 --piece J1 --supply 12 --load 10k --source-z 1k --part RG=1M --part RD=4k7 --part RS1=470 --part CIN=100n --part COUT=1u --rating COUT=6.3V --rating RD=0.25W
# Mistakes (docs/interface.md: exit 1, one error line naming the field and the value): a required
# role missing, an unknown role, an unknown topology, a bad value, a bypass capacitor without
# its resistor, a device of the wrong kind.
--db @DB@ analyze jfet-cs-self --device SJ-101 --supply 12 --load 10k --part RG=1M --part CIN=100n --part COUT=1u
--db @DB@ analyze jfet-cs-self --device SJ-101 --supply 12 --load 10k --part RG=1M --part RD=4k7 --part RQ=1k --part CIN=100n --part COUT=1u
--db @DB@ analyze jfet-common-source --device SJ-101 --supply 12 --load 10k --part RG=1M
--db @DB@ analyze jfet-cs-self --device SJ-101 --supply 12 --load 10k --part RG=1M --part RD=4,7k --part CIN=100n --part COUT=1u
--db @DB@ analyze jfet-cs-self --device SJ-101 --supply 12 --load 10k --part RG=1M --part RD=4k7 --part CS=100u --part CIN=100n --part COUT=1u
--db @DB@ analyze bjt-follower --device SJ-101 --supply 12 --load 10k --part R1=100k --part R2=100k --part RE=4k7 --part CIN=1u --part COUT=10u
--db @DB@ analyze jfet-cs-self --device SJ-101 --supply twelve --load 10k --part RG=1M --part RD=4k7 --part CIN=100n --part COUT=1u
