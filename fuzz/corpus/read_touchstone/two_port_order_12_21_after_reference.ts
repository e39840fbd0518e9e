! Touchstone 2.1 spec Example 21 form: [Two-Port Data Order] 12_21 after [Reference]
[Version] 2.1
# GHz S MA R 50
[Number of Ports] 2
[Number of Frequencies] 2
[Reference] 50 50
[Two-Port Data Order] 12_21
[Network Data]
2 .95 -26 3.57 157 .04 76 .66 -14
22 .60 -144 1.30 40 .14 40 .56 -85
[End]
