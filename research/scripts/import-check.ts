// Developer aid: import a folder and print the failures.
import { loadLibrary } from '../../src/cli/library-dir';
const lib = await loadLibrary(process.argv[2], { quiet: true });
console.log(lib.parts.length, 'parts;', lib.failures.length, 'failures');
for (const f of lib.failures) console.log(f.file, f.reason);
