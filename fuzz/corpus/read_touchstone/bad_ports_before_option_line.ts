[Version] 2.0
[Number of Ports] 1
# GHz S RI R 50
