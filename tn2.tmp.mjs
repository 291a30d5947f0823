import * as ohm from 'ohm-js';
import fs from 'node:fs';
const { NOTATION_SOURCE } = await import('./dist/description/notation.js');
const g = ohm.grammar(NOTATION_SOURCE);
const text = fs.readFileSync('grammars/sql/sql.twg','utf8');
for (let i = 0; i < 5; i++) { const t = performance.now(); const m = g.match(text, 'Description'); console.log('plain match', m.succeeded(), (performance.now()-t).toFixed(0)); }
