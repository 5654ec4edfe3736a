// Builds a second real validation set from Debian's sweethome3d-furniture package, from the models that the
// furniture validation set in ../shared does not use, in classes of its own (beds, cars, people, plants, …):
// a check that defaults chosen on one set hold on real shapes they were not chosen on.
//   apt-get install -y sweethome3d-furniture unzip
//   npx tsx research/scripts/second-set.ts <out-dir> [<first-set-dir>]
// Labels are ours, assigned from each model's catalogue name by the rules below; labels.csv keeps the catalogue
// name, creator, collection and licence of every file (CC-BY needs the attribution kept with any copy).
// Not committed: like the first set, it stays outside the project.

import { execFileSync } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { basename, join } from 'node:path';

const PACKAGE_DIR = '/usr/share/sweethome3d/furniture';
const MAX_BYTES = 2_500_000;
const LICENCES: Record<string, string> = {
  KatorLegaz: 'CC-BY-3.0-US',
  Reallusion: 'CC-BY-3.0-US',
  Scopia: 'CC-BY-3.0',
  'BlendSwap-CC-BY': 'CC-BY-3.0',
  'BlendSwap-CC-0': 'CC0-1.0',
};

/** Class rules on the catalogue's English name (whole name, case-insensitive); the first that matches wins. */
const CLASSES: [string, RegExp][] = [
  ['bed', /^(bed|baby bed|bunk bed|captain's bed|child bed|crib|day bed|hospital bed|iron bed|mezzanine bed)$/i],
  [
    'car',
    /^(chevrolet|concept sedan 01|ford focus|peugeot 308 cc|renault scenic|suv|seat leon|smart car|vw new beetle|van)$/i,
  ],
  ['standing_person', /^(male|female|mannequin female|mannequin male|boy|girl)$/i],
  ['seated_person', /^(sitting boy|sitting female|sitting girl|sitting male)$/i],
  [
    'potted_plant',
    /^(plant|indoor plant|little plant|decorative plant|spider plant|succulent plant|yucca|orchids|cactus|bamboo|bonsai tree)$/i,
  ],
  ['radiator', /^radiator$/i],
  ['stool', /^(stool|bar stool)$/i],
  ['vase', /^(vase|old jar|pottery)$/i],
  ['desk', /^(desk|desk table|wooden desk)$/i],
  ['washbasin', /^(washbasin|basin|small lavatory|vanity|double vanity)$/i],
  ['toilet', /^(toilets unit|urinal|bidet|potty)$/i],
  ['bookcase', /^(bookcase|full bookcase|shelves|vertical shelves)$/i],
  ['two_wheeler', /^(bicycle|bike|scooter|motorbike|yamaha yzr r6)$/i],
  ['railing', /^(iron railing|pedestrian railing|fence)$/i],
];

interface Entry {
  collection: string;
  name: string;
  model: string;
  creator: string;
  width: string;
  depth: string;
  height: string;
}

function catalogue(file: string): Entry[] {
  const collection = basename(file, '.sh3f');
  const text = execFileSync('unzip', ['-p', file, 'PluginFurnitureCatalog.properties']).toString('latin1');
  const byIndex = new Map<number, Record<string, string>>();
  for (const line of text.split(/\r?\n/)) {
    const m = /^(\w+)#(\d+)=(.*)$/.exec(line);
    if (!m) continue;
    const value = m[3].replace(/\\u([0-9a-fA-F]{4})/g, (_, h: string) => String.fromCharCode(parseInt(h, 16)));
    const row = byIndex.get(Number(m[2])) ?? {};
    row[m[1]] = value;
    byIndex.set(Number(m[2]), row);
  }
  return [...byIndex.values()]
    .filter((r) => r.model?.endsWith('.obj'))
    .map((r) => ({
      collection,
      name: r.name ?? '',
      model: r.model.replace(/^\//, ''),
      creator: r.creator ?? '',
      width: r.width ?? '',
      depth: r.depth ?? '',
      height: r.height ?? '',
    }));
}

/** Models the first set uses, as collection + file stem (its files are named <label>_NN_<stem>.obj). */
function firstSetModels(dir: string): Set<string> {
  const rows = readFileSync(join(dir, 'labels.csv'), 'utf8').split(/\r?\n/).slice(1).filter(Boolean);
  return new Set(
    rows.map((row) => {
      const cols = row.split(',');
      return `${cols[4]}/${basename(cols[0], '.obj').replace(/^[a-z_]+_\d\d_/, '')}`;
    }),
  );
}

const [out, firstSet = '../shared/data/furniture-validation'] = process.argv.slice(2);
if (!out) throw new Error('usage: npx tsx research/scripts/second-set.ts <out-dir> [<first-set-dir>]');
if (!existsSync(PACKAGE_DIR)) throw new Error(`${PACKAGE_DIR} not found: apt-get install -y sweethome3d-furniture`);
const used = existsSync(join(firstSet, 'labels.csv')) ? firstSetModels(firstSet) : new Set<string>();
if (used.size === 0) console.error(`warning: no first set at ${firstSet}; nothing is excluded`);
const csv = ['file,label,name,creator,collection,licence,width_cm,depth_cm,height_cm'];
const counts = new Map<string, number>();
for (const file of readdirSync(PACKAGE_DIR)
  .filter((f) => f.endsWith('.sh3f'))
  .sort()) {
  const path = join(PACKAGE_DIR, file);
  for (const e of catalogue(path).sort((a, b) => a.model.localeCompare(b.model))) {
    const stem = basename(e.model, '.obj');
    if (used.has(`${e.collection}/${stem}`)) continue;
    const label = CLASSES.find(([, re]) => re.test(e.name.trim()))?.[0];
    if (!label) continue;
    const data = execFileSync('unzip', ['-p', path, e.model], { maxBuffer: 64 << 20 });
    if (data.length === 0 || data.length > MAX_BYTES) continue;
    const n = counts.get(label) ?? 0;
    counts.set(label, n + 1);
    const name = `${label}/${label}_${String(n).padStart(2, '0')}_${stem}.obj`;
    mkdirSync(join(out, label), { recursive: true });
    writeFileSync(join(out, name), data);
    csv.push(
      [
        name,
        label,
        e.name,
        e.creator,
        e.collection,
        LICENCES[e.collection] ?? 'see the package copyright',
        e.width,
        e.depth,
        e.height,
      ]
        .map((v) => v.replace(/,/g, ' '))
        .join(','),
    );
  }
}
writeFileSync(join(out, 'labels.csv'), csv.join('\n') + '\n');
console.log(
  [...counts]
    .sort()
    .map(([l, n]) => `${l} ${n}`)
    .join(', '),
  `— ${csv.length - 1} files in ${out}`,
);
