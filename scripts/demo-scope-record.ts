// Writes the invented example scope record for the demo bench's ringing step:
//   node scripts/demo-scope-record.ts
// resources/demo/mg20-demo-scope-20khz.csv is this output, and tests/unit/demo-scope.test.ts holds
// the file to it, so change the simulated unit and rerun this together.

import { writeFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { DEMO_EXAMPLE_RECORD, demoScopeRecordText } from '../shared/sim/demo-scope.ts';
import { DEMO_UNIT_PARAMETERS } from '../shared/sim/demo-unit.ts';

const path = fileURLToPath(new URL('../resources/demo/mg20-demo-scope-20khz.csv', import.meta.url));
writeFileSync(path, demoScopeRecordText(DEMO_UNIT_PARAMETERS, DEMO_EXAMPLE_RECORD));
console.log(`wrote ${path}`);
