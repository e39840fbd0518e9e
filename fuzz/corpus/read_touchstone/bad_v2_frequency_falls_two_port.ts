[Version] 2.0
# GHz S RI R 50
[Number of Ports] 2
[Two-Port Data Order] 12_21
[Number of Frequencies] 2
[Network Data]
2 0 0 0 0 0 0 0 0
1 0 0 0 0 0 0 0 0
[End]
