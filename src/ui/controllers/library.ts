// The library job: restore the saved library or load the demo, import files through the import workers,
// keep the result in IndexedDB, and have the thumbnail worker draw each part's picture.

import { FORMAT_NAMES } from '../../core/mesh/formats';
import { DEFAULT_SAMPLING, type LibraryPart } from '../../core/library';
import type { ImportFailure } from '../../core/mesh/import';
import { POOL_POINTS } from '../../core/model/defaults';
import type { FileInput } from '../../worker/protocol';
import { fetchDemoLibrary } from '../demo-library';
import { readFiles, type NamedFile } from '../files';
import { IDLE, KEEPING, RESTORING, say, type AppState, type LibraryState, type Progress, type Store } from '../state';
import { LibraryClient, type TimeLimits } from './library-client';
import {
  exportDatabase,
  importDatabase,
  loadLibrary as loadStoredLibrary,
  loadFolderUnits,
  loadThumbnails,
  partBytes,
  saveFolderUnits,
  saveLibrary,
  saveThumbnails,
  type KeptThumbnail,
} from './library-db';
import { download } from './download';
import { ThumbnailClient } from './thumbnails';
import { cameWithoutMesh, markWritten, meshOf } from './meshes';
import { cameWithoutCloud, cloudOf, cloudWritten } from './clouds';

/** Lets an object URL's picture go (data URLs kept by an earlier version need nothing). */
const forget = (url: string | undefined) => {
  if (url?.startsWith('blob:')) URL.revokeObjectURL(url);
};

/** How library parts are sampled: the pool views draw from, and the seed. */
export const SAMPLING = { ...DEFAULT_SAMPLING, points: POOL_POINTS };

export interface LibraryEvents {
  /** The set of parts changed (an import ended, the library was emptied or restored). */
  onChanged(): void;
  /** A folder's units changed (sizes and the size filter follow). */
  onUnitsChanged(): void;
}

/**
 * Parts read but not yet written that make an import wait (each holds its cloud and mesh on the page until it is
 * written): a few seconds of writing, and tens of MB.
 */
export const MAX_UNWRITTEN_PARTS = 500;
export const MAX_UNWRITTEN_BYTES = 64 * 2 ** 20;

/** Whether an import should wait for the writer before it reads on. */
export const tooMuchUnwritten = (parts: number, bytes: number): boolean =>
  parts > 0 && (parts >= MAX_UNWRITTEN_PARTS || bytes >= MAX_UNWRITTEN_BYTES);

export class LibraryController {
  private readonly client = new LibraryClient();
  private readonly thumbs = new ThumbnailClient();
  private thumbPending = 0;
  private readonly thumbDone = new Map<string, Blob>();
  /** The pictures behind the shown thumbnails, as they are kept for the next visit. */
  private thumbKept = new Map<string, KeptThumbnail>();
  private thumbTimer = 0;
  private cancelling = false;
  /** Counts imports and emptyings: an import's end speaks only if nothing came after it. */
  private generation = 0;
  /** Parts whose meshes are being fetched for the views. */
  private readonly fetching = new Set<string>();
  /** Parts whose mesh or cloud could not be read back (not asked for again). */
  private readonly unreadable = new Set<string>();

  constructor(
    private readonly store: Store<AppState>,
    private readonly events: LibraryEvents,
  ) {}

  /** How long one file may take to read before its worker is stopped (tests shorten it). */
  set timeLimits(limits: TimeLimits) {
    this.client.timeLimits = limits;
  }

  private get state() {
    return this.store.value.library;
  }

  /** The saved library, or the demo library on first start. */
  async restore(): Promise<void> {
    const startedAt = performance.now();
    const stored = await loadStoredLibrary((done, total) =>
      this.store.patch('library', {
        status: { kind: 'running', progress: { done, total, what: RESTORING, startedAt } },
      }),
    );
    if (!stored) return this.loadDemo(); // first start
    if (stored.parts.length === 0) {
      // Emptied on purpose: it stays empty (the demo is one button away).
      this.store.patch('library', { failures: stored.failures, status: IDLE });
      return;
    }
    stored.parts.forEach((p, i) => {
      cameWithoutMesh(p);
      cameWithoutCloud(p, stored.boxRatios[i]);
    });
    const units = await loadFolderUnits();
    const kept = (await loadThumbnails()) ?? new Map<string, KeptThumbnail>();
    const names = new Set(stored.parts.map((p) => p.name));
    const thumbnails = this.showThumbnails(new Map([...kept].filter(([name]) => names.has(name))));
    this.store.patch('library', {
      parts: stored.parts,
      failures: stored.failures,
      selected: stored.parts[0].name,
      status: { kind: 'done', ms: 0 },
      thumbnails,
      units,
    });
    stored.parts.filter((p) => !thumbnails.has(p.name)).forEach((p) => this.queueThumbnail(p));
    this.events.onChanged();
  }

  async loadDemo(): Promise<void> {
    this.store.patch('library', {
      parts: [],
      failures: [],
      thumbnails: this.showThumbnails(new Map()),
      status: { kind: 'running', progress: { done: 0, total: 1, what: 'fetching the demo library' } },
    });
    try {
      await this.importInputs(await fetchDemoLibrary(), [], 'demo');
    } catch (err) {
      this.cancelling = false;
      this.store.patch('library', {
        status: { kind: 'failed', message: `The demo library could not be loaded: ${(err as Error).message}` },
      });
    }
  }

  async add(named: NamedFile[]): Promise<void> {
    const { inputs, skipped } = await readFiles(named);
    const refused = skipped.map((file): ImportFailure => ({
      file,
      code: 'unsupported-type',
      reason: `not a file Shapekin reads (${FORMAT_NAMES})`,
    }));
    await this.importInputs(inputs, refused, 'user');
  }

  clear(): void {
    this.generation++;
    // An import under way stops: its files are not read on, and what it read is not put back (its end sees the
    // newer generation).
    if (this.state.status.kind === 'running') this.client.cancel();
    this.cancelling = false;
    this.store.patch('library', {
      parts: [],
      failures: [],
      thumbnails: this.showThumbnails(new Map()),
      selected: '',
      status: IDLE,
      units: {},
    });
    void saveLibrary({ parts: [], failures: [], source: 'user' });
    void saveFolderUnits({}).catch(() => null);
    void saveThumbnails(new Map());
    this.events.onChanged();
  }

  /** The whole library database (parts, model, embeddings) as one file to hand to a colleague. */
  async exportDatabase(): Promise<void> {
    say(this.store, 'Preparing the library file…');
    try {
      const dump = await exportDatabase();
      download(dump, `shapekin-library-${new Date().toISOString().slice(0, 10)}.tar.gz`);
      say(
        this.store,
        `Saved the library as a file (${(dump.size / 2 ** 20).toFixed(1)} MB): open it with "Open a library file…".`,
      );
    } catch (err) {
      say(this.store, `The library could not be saved as a file: ${(err as Error).message}`);
    }
  }

  /** Replaces the library (and its model) with one saved as a file, then starts again from it. */
  async importDatabase(file: File): Promise<void> {
    say(this.store, `Opening ${file.name}…`);
    try {
      await importDatabase(file);
      await saveThumbnails(new Map());
      location.reload();
    } catch (err) {
      say(
        this.store,
        `${file.name} could not be opened as a library file (nothing was changed): ${(err as Error).message}`,
      );
    }
  }

  /**
   * Says what one file unit is in these folders' files that do not say their units (mm per unit), or that it is
   * not known (null); kept with the library.
   */
  async setUnits(folders: readonly string[], mmPerUnit: number | null): Promise<void> {
    const units = { ...this.state.units };
    for (const folder of folders)
      if (mmPerUnit === null) delete units[folder];
      else units[folder] = mmPerUnit;
    this.store.patch('library', { units });
    this.events.onUnitsChanged();
    try {
      await saveFolderUnits(units);
    } catch (err) {
      say(this.store, `The units could not be kept with the library: ${(err as Error).message}`);
    }
  }

  select(name: string): LibraryPart | null {
    this.store.patch('library', { selected: name });
    return this.state.parts.find((p) => p.name === name) ?? null;
  }

  /** Fetches a part's mesh and point cloud from the parts database for the views; they redraw when both came. */
  fetchMesh(part: LibraryPart): void {
    if (this.fetching.has(part.name) || this.unreadable.has(part.name)) return;
    this.fetching.add(part.name);
    Promise.all([meshOf(part), cloudOf(part)])
      .then(() => this.store.patch('library', { meshesFetched: this.state.meshesFetched + 1 }))
      .catch((err: Error) => {
        this.unreadable.add(part.name); // asked for again at every drawing: said once
        say(this.store, `The shape of ${part.name} could not be read back: ${err.message}`);
      })
      .finally(() => this.fetching.delete(part.name));
  }

  /** Samples one file that is not added to the library (a query from elsewhere); its failure goes to `onFailure`. */
  async readOne(file: File, onFailure: (f: ImportFailure) => void): Promise<LibraryPart | null> {
    let found: LibraryPart | null = null;
    await this.client.importFiles([{ name: file.name, bytes: file }], SAMPLING, {
      onPart: (p) => (found = p),
      onFailure,
      onProgress: () => {},
    });
    if (found) this.queueThumbnail(found);
    return found;
  }

  private async importInputs(inputs: FileInput[], refused: ImportFailure[], source: 'demo' | 'user'): Promise<void> {
    const generation = ++this.generation;
    const incoming = new Set(inputs.map((f) => f.name));
    // Parts arrive one by one; they are collected here and handed to the store in batches, so a library of
    // thousands does not copy its list once per part.
    const parts = this.state.parts.filter((p) => !incoming.has(p.name));
    const failures = [...this.state.failures.filter((f) => !incoming.has(f.file)), ...refused];
    this.store.patch('library', { parts: [...parts], failures: [...failures] });
    if (inputs.length === 0) {
      this.cancelling = false;
      this.store.patch('library', { status: { kind: 'done', ms: 0 } });
      return;
    }
    const startedAt = performance.now();
    this.store.patch('library', {
      status: { kind: 'running', progress: { done: 0, total: inputs.length, what: inputs[0].name, startedAt } },
    });
    // What is read is written to the database as it comes (one writer, a few parts a message), with the list of
    // the parts written so far every few seconds: a reload or a closed tab during a long import keeps them.
    const growing = { parts, failures, source };
    // Reading waits while too much of what it read is not yet written (the page holds those parts' clouds and
    // meshes): 20,000 generated parts were read in 280 s and written in 522 s, and the tab peaked at 1.8 GB.
    const unwritten = { parts: new Set<LibraryPart>(), bytes: 0, failed: false }; // read by this import, not yet written
    const waiting: (() => void)[] = [];
    const release = () => waiting.splice(0).forEach((go) => go());
    const onPartsWritten = (written: readonly LibraryPart[]) => {
      for (const p of written) {
        if (unwritten.parts.delete(p)) unwritten.bytes -= partBytes(p);
        markWritten(p);
        cloudWritten(p);
      }
      release();
    };
    // A failed write here is reported by the closing save (`keep`), which meets it again; reading goes on.
    const keepSoFar = () =>
      void saveLibrary(growing, { interim: true, onPartsWritten }).catch(() => {
        unwritten.failed = true;
        release();
      });
    /** Resolves once reading may go on: enough is written, or writing failed, or the import was stopped or emptied. */
    const ready = async (): Promise<void> => {
      while (
        !unwritten.failed &&
        live() &&
        !this.cancelling &&
        tooMuchUnwritten(unwritten.parts.size, unwritten.bytes)
      ) {
        keepSoFar(); // the writer may have caught up and stopped before the last parts came
        await new Promise<void>((go) => {
          waiting.push(go);
          setTimeout(go, 250); // a stop or an emptying is noticed within a quarter of a second
        });
      }
    };
    let flushAt = 0;
    const live = () => this.generation === generation;
    const flush = (progress: Progress | null) => {
      if (!live()) return; // the library was emptied or another import began: this one's parts are not shown
      flushAt = performance.now();
      const selected = this.state.selected || parts[0]?.name || '';
      this.store.patch('library', {
        parts: [...parts],
        failures: [...failures],
        selected,
        ...(progress ? { status: { kind: 'running', progress } } : {}),
      });
      keepSoFar();
    };
    /** After reading: the parts not yet written are written, with their count on screen; then the job ends. */
    const keep = async (end: LibraryState['status']) => {
      const keepingFrom = performance.now();
      let shownAt = 0;
      let before = -1; // parts written while reading: the time left counts from the rest
      try {
        await saveLibrary(growing, {
          onPartsWritten,
          onWritten: (done, total) => {
            if (before < 0) before = Math.max(0, done - 1);
            if (performance.now() - shownAt < 100 || done === total) return;
            shownAt = performance.now();
            const progress = { done: done - before, total: total - before, what: KEEPING, startedAt: keepingFrom };
            this.store.patch('library', { status: { kind: 'running', progress } });
          },
        });
        // Unless the library was emptied or another import began meanwhile (their status then stands).
        if (live()) this.store.patch('library', { status: end });
      } catch (err) {
        if (live()) this.keepFailed(err as Error);
      }
      this.events.onChanged();
    };
    try {
      if (this.cancelling) throw new Error('superseded'); // stopped while the files were still being fetched
      const ms = await this.client.importFiles(inputs, SAMPLING, {
        onPart: (part) => {
          if (!live()) return;
          parts.push(part);
          unwritten.parts.add(part);
          unwritten.bytes += partBytes(part);
          this.queueThumbnail(part);
        },
        ready,
        onFailure: (failure) => failures.push(failure),
        onProgress: (done, total, what) => {
          if (performance.now() - flushAt > 100 || done === total) flush({ done, total, what, startedAt });
        },
      });
      flush(null);
      await keep({ kind: 'done', ms });
    } catch (err) {
      if (!live()) return; // emptied or superseded: the newer job speaks
      if (this.cancelling) {
        // What was read before the cancel stays in the library, and is kept.
        this.cancelling = false;
        flush(null);
        await keep({ kind: 'cancelled' });
      } else if ((err as Error).message !== 'superseded')
        this.store.patch('library', { status: { kind: 'failed', message: (err as Error).message } });
    }
  }

  /** The parts read could not be written to the database: they stay in this tab, and the page says so. */
  private keepFailed(err: Error): void {
    this.store.patch('library', {
      status: {
        kind: 'failed',
        message: `The parts were read but could not be kept on this computer (a reload will not show them): ${err.message}`,
      },
    });
  }

  /** Stops the import under way; the parts read so far stay. */
  cancel(): void {
    if (this.state.status.kind !== 'running') return;
    this.cancelling = true;
    this.client.cancel();
  }

  /**
   * Thumbnails are drawn in the thumbnail worker, one part after another; the finished ones are handed to the
   * store in batches (at most every 200 ms), so the map is copied once per batch, not once per part.
   */
  private queueThumbnail(part: LibraryPart): void {
    this.thumbPending++;
    void this.thumbs
      .draw(part)
      .then((url) => this.thumbDone.set(part.name, url))
      .catch(() => {}) // no thumbnail: the card shows its placeholder
      .finally(() => {
        this.thumbPending--;
        if (!this.thumbTimer)
          this.thumbTimer = window.setTimeout(() => this.flushThumbnails(), this.thumbPending ? 200 : 0);
      });
  }

  /**
   * The addresses the pages show for these kept pictures (an object URL per PNG: the page never reads a data URL's
   * text, which took 8–11 ms of the page a batch). The addresses shown before are let go.
   */
  private showThumbnails(kept: Map<string, KeptThumbnail>): Map<string, string> {
    for (const url of this.state.thumbnails.values()) forget(url);
    this.thumbKept = kept;
    return new Map([...kept].map(([name, png]) => [name, typeof png === 'string' ? png : URL.createObjectURL(png)]));
  }

  private flushThumbnails(): void {
    this.thumbTimer = 0;
    if (this.thumbDone.size === 0) return;
    const thumbnails = new Map(this.state.thumbnails);
    for (const [name, png] of this.thumbDone) {
      forget(thumbnails.get(name));
      thumbnails.set(name, URL.createObjectURL(png));
      this.thumbKept.set(name, png);
    }
    this.thumbDone.clear();
    this.store.patch('library', { thumbnails });
    if (this.thumbPending === 0) void saveThumbnails(this.thumbKept); // all drawn: kept for the next visit
  }

  dispose(): void {
    this.client.dispose();
    this.thumbs.dispose();
    clearTimeout(this.thumbTimer);
  }
}
