" pactlang sharing agreements: *.deal files
autocmd BufRead,BufNewFile *.deal setfiletype deal
