! [Reference] on the following lines with a comment in between (seen in EM-tool exports)
[Version] 2.0
# GHz S RI R 50
[Number of Ports] 3
[Reference]
25 ! port 1
  50   ! port 2
100
[Number of Frequencies] 1
[Network Data]
1 0.1 0 0 0 0 0
0 0 0.2 0 0 0
0 0 0 0 0.3 0
[End]
