[Version] 2.0
# GHz S RI R 50
[Number of Ports] 1
[Begin Information]
anything goes here: 1 2 3 [Not A Keyword] # not an option line
[End Information]
[Number of Frequencies] 1
[Network Data]
1 0.5 0.5
[End]
