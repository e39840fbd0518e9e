! version-2 form of Touchstone 1.1 spec Example 3 (21_12 order, H in real units)
[Version] 2.0
# KHz H MA R 1
[Number of Ports] 2
[Two-Port Data Order] 21_12
[Number of Frequencies] 1
[Network Data]
2 .95 -26 3.57 157 .04 76 .66 -14
[End]
