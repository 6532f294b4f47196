" Vim filetype plugin
" Language: pactlang sharing agreement (*.deal)

if exists("b:did_ftplugin")
  finish
endif
let b:did_ftplugin = 1

" Comments run from # to the end of the line.
setlocal commentstring=#\ %s
setlocal comments=:#
" Let gq and auto-wrap format comments, never statements.
setlocal formatoptions-=t formatoptions+=croql

let b:undo_ftplugin = "setlocal commentstring< comments< formatoptions<"
