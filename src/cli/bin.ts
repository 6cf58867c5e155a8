// Entry of the bundled command (dist/earmark.mjs, see bin/build.js).
import { main } from './main.ts';

process.exitCode = await main(process.argv.slice(2));
