! comments before [Version]
[Version] 2.0 ! after the version
# GHz S RI R 50 ! after the option line
! between header keywords
[Number of Ports] 2 ! after a keyword
[Two-Port Data Order] 12_21
[Number of Frequencies] 2

[Network Data] ! after [Network Data]
1 0.1 0.2 ! S11
! inside a record
  0.3 0.4 0.5 0.6 0.7 0.8 ! S12 S21 S22
2 0.1 0 0.3 0 0.3 0 0.1 0!no blank before the comment
[End] ! done
! after [End]
