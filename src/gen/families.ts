// The part families of the demo library: each draws its parameters from an Rng and returns a watertight
// solid (z is the part's main axis, millimetres) with its volume by a closed formula, for the checks.

import type { Rng } from '../core/rng';
import {
  circle,
  extrude,
  loft,
  ngonArea,
  pappusVolume,
  polygonArea,
  revolve,
  sweepTube,
  type Frame,
  type P2,
  type Solid,
} from './solids';

export interface GeneratedPart {
  readonly solid: Solid;
  /** Nominal size as the shop would write it on a drawing. */
  readonly nominal: string;
  /** Exact volume of the faceted solid (closed formula for the polygonal shape). */
  readonly volumeFaceted: number;
  /** Volume of the smooth parametric shape (e.g. washer π(R² − r²)t). */
  readonly volumeSmooth: number;
  /** Relative gap to expect between the two from the tessellation alone. */
  readonly tessellationGap: number;
}

export interface Family {
  readonly name: string; // folder name
  readonly code: string; // two-digit family number in the part number
  readonly description: string;
  make(rng: Rng, variant: number): GeneratedPart;
}

/** Ratio of a faceted (m-segment) revolution to the smooth one: (m/2π)·sin(2π/m). */
const facetRatio = (m: number): number => (m / (2 * Math.PI)) * Math.sin((2 * Math.PI) / m);
const pick = <T>(rng: Rng, items: readonly T[]): T => items[rng.int(items.length)];
const round = (x: number, step: number): number => Math.round(x / step) * step;
const segs = (rng: Rng, lo: number, hi: number): number => 4 * Math.round(rng.uniform(lo, hi) / 4);

/** Points on a circular arc from angle a0 to a1 (radians), both ends included. */
function arc(cx: number, cy: number, r: number, a0: number, a1: number, n: number): P2[] {
  return Array.from({ length: n + 1 }, (_, i) => {
    const a = a0 + ((a1 - a0) * i) / n;
    return [cx + r * Math.cos(a), cy + r * Math.sin(a)] as P2;
  });
}

function revolvedPart(profile: P2[], m: number, nominal: string): GeneratedPart {
  const smooth = pappusVolume(profile);
  return {
    solid: revolve(profile, m),
    nominal,
    volumeFaceted: smooth * facetRatio(m),
    volumeSmooth: smooth,
    tessellationGap: 1 - facetRatio(m),
  };
}

const METRIC = [3, 4, 5, 6, 8, 10, 12, 16, 20] as const;

const washer: Family = {
  name: 'washer',
  code: '01',
  description: 'Plain flat washers, M3 to M16',
  make(rng, variant) {
    const d = METRIC[variant];
    const r = (d * rng.uniform(1.05, 1.1)) / 2;
    const R = (d * rng.uniform(1.9, 2.3)) / 2;
    const t = round(d * rng.uniform(0.12, 0.2), 0.1);
    return revolvedPart(
      [
        [r, 0],
        [R, 0],
        [R, t],
        [r, t],
      ],
      segs(rng, 24, 64),
      `M${d}`,
    );
  },
};

const spacer: Family = {
  name: 'spacer',
  code: '02',
  description: 'Round spacers and standoffs, plain bore',
  make(rng) {
    const od = round(rng.uniform(6, 40), 1);
    const id = round(od * rng.uniform(0.35, 0.6), 0.5);
    const len = round(od * rng.uniform(0.6, 3), 1);
    return revolvedPart(
      [
        [id / 2, 0],
        [od / 2, 0],
        [od / 2, len],
        [id / 2, len],
      ],
      segs(rng, 20, 56),
      `OD${od} ID${id} L${len}`,
    );
  },
};

const bushing: Family = {
  name: 'flanged-bushing',
  code: '03',
  description: 'Flanged sleeve bushings',
  make(rng) {
    const bore = round(rng.uniform(6, 40), 1);
    const rs = (bore / 2) * rng.uniform(1.2, 1.45);
    const rf = rs * rng.uniform(1.35, 1.8);
    const tf = round(bore * rng.uniform(0.12, 0.25), 0.5);
    const len = round(bore * rng.uniform(0.8, 1.8), 1);
    const profile: P2[] = [
      [bore / 2, 0],
      [rf, 0],
      [rf, tf],
      [rs, tf],
      [rs, len],
      [bore / 2, len],
    ];
    return revolvedPart(profile, segs(rng, 24, 56), `ID${bore} L${len}`);
  },
};

const hexNut: Family = {
  name: 'hex-nut',
  code: '04',
  description: 'Hexagon nuts, M4 to M20',
  make(rng, variant) {
    const d = METRIC[variant + 1];
    const s = d * rng.uniform(1.55, 1.8); // across flats
    const a = s / Math.sqrt(3); // circumradius of the hexagon
    const h = round(d * rng.uniform(0.75, 0.9), 0.1);
    const m = segs(rng, 16, 40);
    const hex = circle(0, 0, a, 6, Math.PI / 6);
    const hexArea = ((3 * Math.sqrt(3)) / 2) * a * a;
    return {
      solid: extrude(hex, [circle(0, 0, d / 2, m)], h),
      nominal: `M${d}`,
      volumeFaceted: (hexArea - ngonArea(d / 2, m)) * h,
      volumeSmooth: (hexArea - Math.PI * (d / 2) ** 2) * h, // hexagonal prism minus the bore
      tessellationGap: (Math.PI * (d / 2) ** 2 * (1 - facetRatio(m))) / (hexArea - Math.PI * (d / 2) ** 2),
    };
  },
};

const flange: Family = {
  name: 'flange',
  code: '05',
  description: 'Flat flanges with a bolt circle',
  make(rng) {
    const od = round(rng.uniform(50, 220), 5);
    const bore = round(od * rng.uniform(0.25, 0.45), 1);
    const bolts = pick(rng, [4, 4, 6, 8, 8, 12]);
    const boltR = (od * rng.uniform(0.045, 0.06)) / 1;
    const pitch = (od / 2 + bore / 2) / 2 + rng.uniform(-0.02, 0.02) * od;
    const t = round(od * rng.uniform(0.06, 0.14), 0.5);
    const m = segs(rng, 48, 96),
      mh = segs(rng, 16, 32),
      mb = segs(rng, 12, 20);
    const holes = [circle(0, 0, bore / 2, mh)];
    for (let k = 0; k < bolts; k++) {
      const a = (2 * Math.PI * k) / bolts;
      holes.push(circle(pitch * Math.cos(a), pitch * Math.sin(a), boltR, mb));
    }
    const smoothArea = Math.PI * ((od / 2) ** 2 - (bore / 2) ** 2 - bolts * boltR ** 2);
    const facetArea = ngonArea(od / 2, m) - ngonArea(bore / 2, mh) - bolts * ngonArea(boltR, mb);
    return {
      solid: extrude(circle(0, 0, od / 2, m), holes, t),
      nominal: `OD${od} ${bolts}x${round(2 * boltR, 0.1).toFixed(1)} t${t}`,
      volumeFaceted: facetArea * t,
      volumeSmooth: smoothArea * t,
      tessellationGap: Math.abs(1 - facetArea / smoothArea),
    };
  },
};

const gear: Family = {
  name: 'spur-gear',
  code: '06',
  description: 'Spur gears, straight-flank tooth outline',
  make(rng) {
    const z = 10 + rng.int(31);
    const module = pick(rng, [1, 1.25, 1.5, 2, 2.5, 3]);
    const rp = (module * z) / 2,
      ra = rp + module,
      rf = rp - 1.25 * module;
    const p = (2 * Math.PI) / z;
    const outline: P2[] = [];
    const steps: [number, number][] = [
      [-0.5, rf],
      [-0.27, rf],
      [-0.19, rp],
      [-0.11, ra],
      [0.11, ra],
      [0.19, rp],
      [0.27, rf],
    ];
    for (let k = 0; k < z; k++)
      for (const [f, r] of steps) outline.push([r * Math.cos((k + f) * p), r * Math.sin((k + f) * p)]);
    const bore = round(rf * rng.uniform(0.3, 0.6), 0.5);
    const width = round(module * rng.uniform(6, 12), 0.5);
    const m = segs(rng, 16, 40);
    const area = polygonArea(outline);
    return {
      solid: extrude(outline, [circle(0, 0, bore, m)], width),
      nominal: `m${module} z${z}`,
      volumeFaceted: (area - ngonArea(bore, m)) * width,
      volumeSmooth: (area - Math.PI * bore * bore) * width, // tooth outline area by the shoelace formula, exact
      tessellationGap: (Math.PI * bore * bore * (1 - facetRatio(m))) / (area - Math.PI * bore * bore),
    };
  },
};

/** Cross-section of a shaft step: a circle, optionally with a flat (D-cut) of the given depth at the top. */
function shaftSection(r: number, m: number, flatDepth: number): P2[] {
  return Array.from({ length: m }, (_, i) => {
    const a = (2 * Math.PI * i) / m;
    let rr = r;
    if (flatDepth > 0) {
      const c = Math.cos(a - Math.PI / 2);
      if (c > 0) rr = Math.min(r, (r - flatDepth) / c);
    }
    return [rr * Math.cos(a), rr * Math.sin(a)] as P2;
  });
}

const shaft: Family = {
  name: 'stepped-shaft',
  code: '07',
  description: 'Stepped shafts, some with a flat for a set screw',
  make(rng) {
    const steps = 2 + rng.int(3);
    const m = segs(rng, 24, 56);
    const base = rng.uniform(8, 30);
    const radii: number[] = [];
    const lengths: number[] = [];
    for (let i = 0; i < steps; i++) {
      radii.push(round((base / 2) * (1 + 0.35 * Math.min(i, steps - 1 - i) + rng.uniform(0, 0.25)), 0.5));
      lengths.push(round(base * rng.uniform(0.8, 2.5), 1));
    }
    const flat = rng.next() < 0.6 ? round(radii[0] * rng.uniform(0.12, 0.25), 0.1) : 0;
    const sections: { z: number; loop: P2[] }[] = [];
    let z = 0,
      faceted = 0,
      smooth = 0;
    for (let i = 0; i < steps; i++) {
      const loop = shaftSection(radii[i], m, i === 0 ? flat : 0);
      sections.push({ z, loop }, { z: z + lengths[i], loop });
      faceted += polygonArea(loop) * lengths[i];
      let area = Math.PI * radii[i] ** 2;
      if (i === 0 && flat > 0) {
        const h = radii[i] - flat; // circular segment cut off by the flat: r²·acos(h/r) − h·√(r² − h²)
        area -= radii[i] ** 2 * Math.acos(h / radii[i]) - h * Math.sqrt(radii[i] ** 2 - h * h);
      }
      smooth += area * lengths[i];
      z += lengths[i];
    }
    return {
      solid: loft(sections),
      nominal: `D${2 * Math.max(...radii)} L${z}`,
      volumeFaceted: faceted,
      volumeSmooth: smooth,
      tessellationGap: 1 - facetRatio(m) + (flat > 0 ? 4 / m : 0), // the flat's edges fall between facets
    };
  },
};

const elbow: Family = {
  name: 'pipe-elbow',
  code: '08',
  description: 'Butt-weld pipe elbows, 45° and 90°, DN15 to DN80',
  make(rng, variant) {
    const dn = [15, 20, 25, 32, 40, 50, 65, 80][variant];
    const od = dn * rng.uniform(1.2, 1.4);
    const wall = od * rng.uniform(0.06, 0.1);
    const rho = od * rng.uniform(1.0, 1.6);
    const phi = (variant % 2 === 0 ? 90 : 45) * (Math.PI / 180);
    const stub = od * rng.uniform(0.1, 0.5);
    const k = segs(rng, 8, 24),
      m = segs(rng, 16, 40);
    const frames: Frame[] = [];
    frames.push({ origin: [rho, -stub, 0], u: [1, 0, 0], v: [0, 0, -1] });
    for (let i = 0; i <= k; i++) {
      const a = (phi * i) / k;
      frames.push({
        origin: [rho * Math.cos(a), rho * Math.sin(a), 0],
        u: [Math.cos(a), Math.sin(a), 0],
        v: [0, 0, -1],
      });
    }
    const t = [-Math.sin(phi), Math.cos(phi)];
    frames.push({
      origin: [rho * Math.cos(phi) + stub * t[0], rho * Math.sin(phi) + stub * t[1], 0],
      u: [Math.cos(phi), Math.sin(phi), 0],
      v: [0, 0, -1],
    });
    const ro = od / 2,
      ri = od / 2 - wall;
    const facetArea = ngonArea(ro, m) - ngonArea(ri, m);
    const smoothArea = Math.PI * (ro * ro - ri * ri);
    // Pappus: a section of area A swept through angle φ at radius ρ gives A·ρ·φ; with k chords, A·ρ·k·sin(φ/k).
    return {
      solid: sweepTube(frames, ro, ri, m),
      nominal: `DN${dn} ${Math.round((phi * 180) / Math.PI)}deg`,
      volumeFaceted: facetArea * (rho * k * Math.sin(phi / k) + 2 * stub),
      volumeSmooth: smoothArea * (rho * phi + 2 * stub),
      tessellationGap: 1 - facetRatio(m) + (1 - Math.sin(phi / k) / (phi / k)),
    };
  },
};

const pulley: Family = {
  name: 'v-pulley',
  code: '09',
  description: 'V-belt pulleys with one or two grooves',
  make(rng) {
    const R = round(rng.uniform(25, 110), 1);
    const bore = round(R * rng.uniform(0.2, 0.35), 0.5);
    const grooves = rng.next() < 0.5 ? 1 : 2;
    const pitch = round(R * rng.uniform(0.22, 0.3), 0.5);
    const depth = pitch * rng.uniform(0.7, 0.9);
    const rim = pitch * 0.3;
    const width = grooves * pitch + 2 * rim;
    const profile: P2[] = [
      [bore, 0],
      [R, 0],
      [R, rim],
    ];
    for (let g = 0; g < grooves; g++) {
      const z0 = rim + g * pitch;
      profile.push([R - depth, z0 + pitch * 0.38], [R - depth, z0 + pitch * 0.62], [R, z0 + pitch]);
    }
    profile.push([R, width], [bore, width]);
    return revolvedPart(profile, segs(rng, 32, 72), `OD${2 * R} ${grooves}x`);
  },
};

const knob: Family = {
  name: 'lobed-knob',
  code: '10',
  description: 'Lobed clamping knobs (3 to 8 lobes)',
  make(rng) {
    const lobes = 3 + rng.int(6);
    const R = round(rng.uniform(12, 40), 0.5);
    const depth = rng.uniform(0.15, 0.3);
    const m = lobes * segs(rng, 12, 20);
    const outline: P2[] = Array.from({ length: m }, (_, i) => {
      const a = (2 * Math.PI * i) / m;
      const r = R * (1 - (depth * (1 - Math.cos(lobes * a))) / 2);
      return [r * Math.cos(a), r * Math.sin(a)];
    });
    const bore = round(R * rng.uniform(0.15, 0.3), 0.5);
    const h = round(R * rng.uniform(0.5, 1.1), 0.5);
    const mb = segs(rng, 16, 32);
    const area = polygonArea(outline);
    // Smooth lobed outline r(θ) = R(1 − d(1 − cos nθ)/2): area ½∫r²dθ = πR²((1 − d/2)² + d²/8).
    const smoothOutline = Math.PI * R * R * ((1 - depth / 2) ** 2 + (depth * depth) / 8);
    return {
      solid: extrude(outline, [circle(0, 0, bore, mb)], h),
      nominal: `${lobes}-lobe D${2 * R}`,
      volumeFaceted: (area - ngonArea(bore, mb)) * h,
      volumeSmooth: (smoothOutline - Math.PI * bore * bore) * h,
      tessellationGap: 1 - facetRatio(m) + 1 - facetRatio(mb),
    };
  },
};

/** Profiles extruded along z: I-beam, channel and angle, with root fillets of n segments. */
function profilePart(outline: P2[], smoothArea: number, length: number, nominal: string, n: number): GeneratedPart {
  const area = polygonArea(outline);
  return {
    solid: extrude(outline, [], length),
    nominal,
    volumeFaceted: area * length,
    volumeSmooth: smoothArea * length,
    tessellationGap: Math.abs(1 - area / smoothArea) + 0.5 / (n * n),
  };
}

const FILLET_LEFTOVER = 1 - Math.PI / 4; // a square r² minus the quarter disc it holds

const iBeam: Family = {
  name: 'i-beam',
  code: '11',
  description: 'I-section beam offcuts',
  make(rng) {
    const h = round(rng.uniform(60, 240), 10),
      b = round(h * rng.uniform(0.45, 0.75), 2);
    const tf = round(h * rng.uniform(0.06, 0.09), 0.5),
      tw = round(tf * rng.uniform(0.55, 0.75), 0.5);
    const rf = round(tw * rng.uniform(1, 2), 0.5),
      n = 2 + rng.int(5);
    const x = tw / 2,
      y = h / 2;
    const outline: P2[] = [
      [-b / 2, -y],
      [b / 2, -y],
      [b / 2, -y + tf],
      ...arc(x + rf, -y + tf + rf, rf, -Math.PI / 2, -Math.PI, n),
      ...arc(x + rf, y - tf - rf, rf, Math.PI, Math.PI / 2, n),
      [b / 2, y - tf],
      [b / 2, y],
      [-b / 2, y],
      [-b / 2, y - tf],
      ...arc(-x - rf, y - tf - rf, rf, Math.PI / 2, 0, n),
      ...arc(-x - rf, -y + tf + rf, rf, 0, -Math.PI / 2, n),
      [-b / 2, -y + tf],
    ];
    const smooth = b * h - (b - tw) * (h - 2 * tf) + 4 * rf * rf * FILLET_LEFTOVER;
    return profilePart(outline, smooth, round(h * rng.uniform(1.5, 4), 10), `I${h}x${b}`, n);
  },
};

const channel: Family = {
  name: 'channel',
  code: '12',
  description: 'Channel (U) section offcuts',
  make(rng) {
    const h = round(rng.uniform(50, 200), 10),
      b = round(h * rng.uniform(0.35, 0.55), 2);
    const tf = round(h * rng.uniform(0.07, 0.1), 0.5),
      tw = round(tf * rng.uniform(0.6, 0.8), 0.5);
    const rf = round(tw * rng.uniform(1, 2), 0.5),
      n = 2 + rng.int(5);
    const outline: P2[] = [
      [0, 0],
      [b, 0],
      [b, tf],
      ...arc(tw + rf, tf + rf, rf, -Math.PI / 2, -Math.PI, n),
      ...arc(tw + rf, h - tf - rf, rf, Math.PI, Math.PI / 2, n),
      [b, h - tf],
      [b, h],
      [0, h],
    ];
    const smooth = b * h - (b - tw) * (h - 2 * tf) + 2 * rf * rf * FILLET_LEFTOVER;
    return profilePart(outline, smooth, round(h * rng.uniform(1.5, 4), 10), `U${h}x${b}`, n);
  },
};

const angle: Family = {
  name: 'angle',
  code: '13',
  description: 'Equal and unequal angle (L) section offcuts',
  make(rng) {
    const a = round(rng.uniform(30, 150), 5),
      bLeg = rng.next() < 0.5 ? a : round(a * rng.uniform(0.5, 0.8), 5);
    const t = round(a * rng.uniform(0.07, 0.12), 0.5),
      rf = round(t * rng.uniform(0.8, 1.5), 0.5),
      n = 2 + rng.int(5);
    const outline: P2[] = [
      [0, 0],
      [a, 0],
      [a, t],
      ...arc(t + rf, t + rf, rf, -Math.PI / 2, -Math.PI, n),
      [t, bLeg],
      [0, bLeg],
    ];
    const smooth = t * (a + bLeg - t) + rf * rf * FILLET_LEFTOVER;
    return profilePart(outline, smooth, round(a * rng.uniform(1, 3), 5), `L${a}x${bLeg}x${t}`, n);
  },
};

const plate: Family = {
  name: 'mounting-plate',
  code: '14',
  description: 'Rectangular mounting plates with a hole pattern',
  make(rng) {
    const a = round(rng.uniform(60, 300), 5),
      b = round(a * rng.uniform(0.4, 0.9), 5);
    const t = round(rng.uniform(4, 16), 1),
      rc = round(Math.min(a, b) * rng.uniform(0.04, 0.12), 0.5);
    const n = 2 + rng.int(5);
    const outline: P2[] = [
      ...arc(a - rc, rc, rc, -Math.PI / 2, 0, n),
      ...arc(a - rc, b - rc, rc, 0, Math.PI / 2, n),
      ...arc(rc, b - rc, rc, Math.PI / 2, Math.PI, n),
      ...arc(rc, rc, rc, Math.PI, 1.5 * Math.PI, n),
    ];
    const [nx, ny]: readonly [number, number] = pick(rng, [
      [2, 2],
      [3, 2],
      [2, 1],
      [3, 3],
      [4, 2],
    ] as const);
    const hr = round(Math.min(a, b) * rng.uniform(0.03, 0.06), 0.25),
      mh = segs(rng, 12, 24);
    const holes: P2[][] = [];
    const margin = Math.max(rc, 3 * hr);
    for (let i = 0; i < nx; i++)
      for (let j = 0; j < ny; j++) {
        const x = nx === 1 ? a / 2 : margin + ((a - 2 * margin) * i) / (nx - 1);
        const y = ny === 1 ? b / 2 : margin + ((b - 2 * margin) * j) / (ny - 1);
        holes.push(circle(x, y, hr, mh));
      }
    const count = nx * ny;
    const area = polygonArea(outline);
    const smooth = a * b - (4 - Math.PI) * rc * rc - count * Math.PI * hr * hr;
    const faceted = area - count * ngonArea(hr, mh);
    return {
      solid: extrude(outline, holes, t),
      nominal: `${a}x${b}x${t} ${count}H`,
      volumeFaceted: faceted * t,
      volumeSmooth: smooth * t,
      tessellationGap: Math.abs(1 - faceted / smooth) + 1e-6,
    };
  },
};

export const FAMILIES: readonly Family[] = [
  washer,
  spacer,
  bushing,
  hexNut,
  flange,
  gear,
  shaft,
  elbow,
  pulley,
  knob,
  iBeam,
  channel,
  angle,
  plate,
];
