# Op-amp types as records and stock (invented types; figures of the usual order for such parts,
# from memory, not any one datasheet's): added by option and imported from a file, listed as a
# table and as JSON, stocked by the package, exported; bad figures and a transistor-only command
# on an op-amp refused with one error line and exit 1.
--db @DB@ init
--db @DB@ devices add SA-X2 --kind OPAMP --channels 2 --vs 2.7..5.5 --gbw 1M --slew 0.6V/us --aol 112dB --out-drop-hi 0.02 --out-drop-lo 0.02 --out-drop-ohm 25 --iout-max 20m --cm-drop-hi -0.1 --cm-drop-lo -0.1 --vos 6m --ib 10p --iq 100u --v-max 6
--db @DB@ devices add SA-X3 --kind OPAMP --channels 2 --vs 3..32 --gbw 1M --slew 0.5V/us --aol 100dB
--db @DB@ devices add SA-X3 --kind OPAMP --channels 8 --vs 3..32 --gbw 1M --slew 0.5V/us --aol 100dB --out-drop-hi 1.5 --out-drop-lo 0.02 --out-drop-ohm 150 --iout-max 20m --cm-drop-hi 1.5 --cm-drop-lo -0.3 --vos 5m --ib 250n
--db @DB@ devices add SA-X3 --kind OPAMP --channels 2 --vs 3..32 --gbw 1M --slew 0.5V --aol 100dB --out-drop-hi 1.5 --out-drop-lo 0.02 --out-drop-ohm 150 --iout-max 20m --cm-drop-hi 1.5 --cm-drop-lo -0.3 --vos 5m --ib 250n
--db @DB@ devices add SQ-410 --kind NPN --hfe 110..450 --gbw 1M
--db @DB@ devices add SQ-410 --kind NPN --hfe 110..450
--db @DB@ devices import @EXAMPLES@/opamp_types.csv
--db @DB@ devices list
--db @DB@ devices list --json
--db @DB@ stock add OPAMP SA-Q7 5 --bin E1 --package DIP-14
--db @DB@ stock add OPAMP SA-X2 4 --bin E3 --package SOIC-8
--db @DB@ stock add NPN SA-D5 2
--db @DB@ stock add OPAMP SQ-410 2
--db @DB@ stock add NPN SQ-410 20 --bin D10
--db @DB@ stock list
--db @DB@ stock export
--db @DB@ devices measure SA-Q7 --hfe 100
--db @DB@ analyze bjt-follower --device SA-D5 --supply 12 --load 10k --part R1=100k --part R2=100k --part RE=4k7 --part CIN=1u --part COUT=10u
# An op-amp type designs op-amp stages; this shelf holds no resistors or capacitors, so the
# search names the smallest purchase that would build one and exits 2.
--db @DB@ design --gain 10 --load 10k --supply 12 --zin 100k --device SA-Q7
