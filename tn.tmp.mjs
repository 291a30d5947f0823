const T0 = performance.now(); const lap = (l) => console.log(l.padEnd(30), (performance.now() - T0).toFixed(0));
const n = await import('./dist/description/notation.js'); lap('import notation');
n.notationGrammar(); lap('grammar');
const fs = await import('node:fs');
const r = n.parseNotation(fs.readFileSync('grammars/sql/sql.twg','utf8')); lap('parse sql.twg ' + r.ok);
const r2 = n.parseNotation(fs.readFileSync('grammars/lf/lf.twg','utf8')); lap('parse lf.twg ' + r2.ok);
const r3 = n.parseNotation(fs.readFileSync('grammars/sql/sql.twg','utf8')); lap('parse sql.twg again');
const { loadGrammar } = await import('./dist/description/index.js'); lap('import description');
loadGrammar('grammars/sql/sql.twg'); lap('loadGrammar sql');
