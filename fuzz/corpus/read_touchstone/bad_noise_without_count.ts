[Version] 2.0
# GHz S RI R 50
[Number of Ports] 2
[Two-Port Data Order] 21_12
[Number of Frequencies] 1
[Network Data]
2 .95 -26 3.57 157 .04 76 .66 -14
[Noise Data]
4 .7 .64 69 19
[End]
