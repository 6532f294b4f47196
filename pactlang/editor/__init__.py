"""Editor questions -> answers, without the editor protocol: the pygls-free half of `pactlang serve`.

`snapshot` analyses one version of a document and runs its check,
`verdicts` turns results into diagnostics, `names` finds the names in a
document and their declarations, and `hovers` writes hover texts.
`pactlang.server` converts positions, speaks the protocol and schedules the
work; everything here counts lines and columns from 1, as the library does.
"""
