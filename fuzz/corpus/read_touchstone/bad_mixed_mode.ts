[Version] 2.0
# GHz S RI R 50
[Number of Ports] 4
[Number of Frequencies] 1
[Mixed-Mode Order] D1,2 C1,2 D3,4 C3,4
