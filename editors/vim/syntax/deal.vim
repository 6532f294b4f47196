" Vim syntax file
" Language: pactlang sharing agreement (*.deal)
" Every group links to a standard group at the end of this file, so any
" colour scheme colours agreements without knowing about them.

if exists("b:current_syntax")
  finish
endif

let s:cpo_save = &cpo
set cpo&vim

syn case match

" Comments and strings first: what they contain is never a keyword.
syn keyword dealTodo contained TODO FIXME XXX NOTE
syn match dealComment "#.*$" contains=dealTodo,@Spell
" The only escapes are \" and \\; an unterminated string stops at the end of its line.
syn match dealEscape contained +\\[\\"]+
syn region dealString start=+"+ skip=+\\[\\"]+ end=+"+ end=+$+ contains=dealEscape,@Spell

" Statements. A declaration highlights the name it introduces.
syn keyword dealStatement agreement contingency require round
" parties from "FILE.csv": the party list read from a file.
syn match dealStatement "\<parties\s\+from\>"
syn keyword dealStatement party nextgroup=dealPartyName skipwhite
syn keyword dealStatement param nextgroup=dealParamName skipwhite
syn keyword dealStatement payout nextgroup=dealPartyRef skipwhite
syn keyword dealStatement worth nextgroup=dealCoalitionName skipwhite
syn match dealPartyName contained "\h\w*"
" party NAME: ATTR VALUE, ATTR VALUE: every name after the colon or a comma is
" an attribute, even one spelled like a function (count) or a share kind (value).
syn match dealAttributeName "\%(^\s*party\s\+\h\w*\s*:\%([^#]*,\)\=\s*\)\@<=\h\w*"
syn match dealParamName contained "\h\w*"
" payout NAME = ... and without NAME refer to a party (rest and by are keywords).
syn match dealPartyRef contained "\%(\<\%(rest\|by\)\>\)\@!\h\w*"
" worth S = ...: S names the coalition in the formula (all and otherwise are keywords).
syn match dealCoalitionName contained "\%(\<\%(all\|otherwise\)\>\)\@!\h\w*"

" shares cost|value [in UNIT]: cost and value are keywords only here, so an
" attribute may still be called value.
syn keyword dealStatement shares nextgroup=dealShareKind skipwhite
syn keyword dealShareKind contained cost value nextgroup=dealUnitIn skipwhite
syn keyword dealUnitIn contained in nextgroup=dealUnit,dealString skipwhite
syn match dealUnit contained +[^ \t#"]\%([^#"]*[^ \t#"]\)\=+

syn keyword dealKeyword in all otherwise by rest of within
syn keyword dealKeyword without nextgroup=dealPartyRef skipwhite
syn keyword dealRequirement stable
syn match dealRequirement "\<individually\s\+rational\>"
syn match dealRequirement "\<balanced\s\+budget\>"

" Payout rules.
syn keyword dealRule shapley nucleolus
syn match dealRule "\<equal\s\+split\>"
syn match dealRule "\<proportional\s\+to\>"
syn match dealRule "\<separable\s\+costs\s\+remaining\s\+benefits\>"
" round payouts to STEP by largest remainder
syn keyword dealKeyword payouts
syn match dealRule "\<largest\s\+remainder\>"

syn keyword dealConditional if then else
syn keyword dealLogical and or not
" Only a call is a function: an attribute may be called count.
syn match dealFunction "\<\%(sum\|max\|min\|count\)\ze\s*("

syn match dealNumber "\<\d\+\%(\.\d\+\)\=\>"
syn match dealPercent "\<\d\+\%(\.\d\+\)\=%"
syn match dealOperator "[-+*/=<>]\|!=\|\.\."
syn match dealBrace "[{}]"
syn match dealDelimiter "[(),;:]"

hi def link dealTodo          Todo
hi def link dealComment       Comment
hi def link dealEscape        SpecialChar
hi def link dealString        String
hi def link dealStatement     Statement
hi def link dealPartyName     Type
hi def link dealParamName     Identifier
hi def link dealAttributeName Identifier
hi def link dealPartyRef      Identifier
hi def link dealCoalitionName Identifier
hi def link dealShareKind     Keyword
hi def link dealUnitIn        Keyword
hi def link dealUnit          Identifier
hi def link dealKeyword       Keyword
hi def link dealRequirement   Keyword
hi def link dealRule          Keyword
hi def link dealConditional   Conditional
hi def link dealLogical       Operator
hi def link dealFunction      Function
hi def link dealNumber        Number
hi def link dealPercent       Number
hi def link dealOperator      Operator
hi def link dealBrace         Delimiter
hi def link dealDelimiter     Delimiter

let b:current_syntax = "deal"

let &cpo = s:cpo_save
unlet s:cpo_save
