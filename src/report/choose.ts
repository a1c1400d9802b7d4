/**
 * The report's choices that passes need while frames are read (so that workers can make them
 * without loading the report writers): which g(r) pairs, and the conductivity layout on the
 * shared coordinate store.
 */
import type { Topology } from '../types.js';
import type { SiteLayout } from '../store/sites.js';

// ---------------------------------------------------------------------------------------------
// Which g(r) pairs
// ---------------------------------------------------------------------------------------------

/** With at most this many distinct labels every pair of labels gets a g(r). */
export const ALL_PAIRS_MAX_LABELS = 4;
/** Most g(r) pairs a report computes. */
export const MAX_RDF_PAIRS = 36;

/** One g(r) pair: the labels shown and the selections (src/selection.ts) that pick them. */
export interface RdfPairChoice {
  labelA: string;
  labelB: string;
  a: string;
  b: string;
}

/**
 * Selection text that picks exactly the atoms whose label is `label`: the bare name when it is
 * made of letters, digits and _ + - . # ' (and is not "all"); "label=NAME" when the name holds
 * none of the characters the selection syntax gives a meaning to (',', '&', ':', '*', blanks);
 * otherwise the atoms' index ranges "idx=i-j,idx=k,…" in `labels` (one label per atom).
 */
export function labelSelection(label: string, labels: readonly string[]): string {
  if (/^[A-Za-z0-9_+\-.#']+$/.test(label) && label !== 'all') return label;
  if (!/[,&:*\s]/.test(label) && label.length > 0) return `label=${label}`;
  const parts: string[] = [];
  for (let i = 0; i < labels.length; i++) {
    if (labels[i] !== label) continue;
    let j = i;
    while (j + 1 < labels.length && labels[j + 1] === label) j++;
    parts.push(i === j ? `idx=${i}` : `idx=${i}-${j}`);
    i = j;
  }
  return parts.join(',');
}

/** Distinct labels in order of first appearance, with their atom counts. */
export function labelCounts(labels: readonly string[]): Map<string, number> {
  const m = new Map<string, number>();
  for (const l of labels) m.set(l, (m.get(l) ?? 0) + 1);
  return m;
}

/**
 * The g(r) pairs of a report, each written A–B with A the centre: labels are ordered charged
 * first, then by increasing atom count (solutes before the solvent), then by first appearance,
 * and A comes first in that order. With at most ALL_PAIRS_MAX_LABELS distinct labels: every
 * unordered pair of labels, a label with itself included. With more: every pair that involves
 * a charged label (an ion) — with each label, itself included — plus the solvent–solvent pair,
 * the solvent being the most numerous label; without charges, the solvent with every label. At
 * most MAX_RDF_PAIRS pairs, in that order. Returns the pairs and the rule in words.
 */
export function chooseRdfPairs(topology: Pick<Topology, 'labels'>, charges: Float64Array | null): { pairs: RdfPairChoice[]; rule: string } {
  const counts = labelCounts(topology.labels);
  const charged = new Set<string>();
  if (charges) topology.labels.forEach((l, i) => { if (charges[i] !== 0) charged.add(l); });
  // Centres first: charged labels, then the less numerous (solutes before the solvent).
  const firstSeen = [...counts.keys()];
  const labels = [...firstSeen].sort((x, y) => Number(charged.has(y)) - Number(charged.has(x)) || counts.get(x)! - counts.get(y)! || firstSeen.indexOf(x) - firstSeen.indexOf(y));
  const sel = new Map(labels.map((l) => [l, labelSelection(l, topology.labels)]));
  const seen = new Set<string>();
  const pairs: RdfPairChoice[] = [];
  const add = (x: string, y: string) => {
    const [p, q] = labels.indexOf(x) <= labels.indexOf(y) ? [x, y] : [y, x];
    const key = JSON.stringify([p, q]);
    if (seen.has(key) || (p === q && counts.get(p)! < 2)) return;
    seen.add(key);
    pairs.push({ labelA: p, labelB: q, a: sel.get(p)!, b: sel.get(q)! });
  };
  let rule: string;
  if (labels.length <= ALL_PAIRS_MAX_LABELS) {
    for (let i = 0; i < labels.length; i++) for (let j = i; j < labels.length; j++) add(labels[i], labels[j]);
    rule = `every pair of the ${labels.length} atom label${labels.length === 1 ? '' : 's'} (a label with itself included when it has two atoms or more)`;
  } else {
    let solvent = labels[0];
    for (const l of labels) if (counts.get(l)! > counts.get(solvent)!) solvent = l;
    const centres = charged.size > 0 ? labels.filter((l) => charged.has(l)) : [solvent];
    for (const c of centres) for (const l of labels) add(c, l);
    add(solvent, solvent);
    rule =
      `${labels.length} atom labels (more than ${ALL_PAIRS_MAX_LABELS}): ` +
      (charged.size > 0
        ? `every pair involving a charged label (${centres.join(', ')}) with each label, plus the solvent–solvent pair`
        : 'no charges known, so the solvent with each label') +
      `; the solvent is the most numerous label (${solvent}, ${counts.get(solvent)} atoms)`;
  }
  if (pairs.length > MAX_RDF_PAIRS) {
    rule += `; limited to the first ${MAX_RDF_PAIRS} of ${pairs.length} pairs`;
    pairs.length = MAX_RDF_PAIRS;
  }
  return { pairs, rule };
}

// ---------------------------------------------------------------------------------------------
// Conductivity on the shared coordinate store
// ---------------------------------------------------------------------------------------------

/**
 * The conductivity layout over a store that holds every atom as one site (the species layout
 * without a selection): the same sites, charge q_i per site (neutral sites contribute nothing to
 * the collective dipole), groups = the charged species. A label whose atoms carry several
 * charges is split into "label(charge)" groups. `sameGroups` is true when every charged group is
 * one whole species group of `layout`, so the species MSD can be reused.
 */
export function chargeLayoutOnStore(layout: SiteLayout, q: Float64Array): SiteLayout & { siteCharges: Float64Array; sameGroups: boolean } {
  const map = layout.map;
  if (map.count !== q.length) throw new Error(`charge layout: ${q.length} charges for ${map.count} sites`);
  for (let s = 0; s < map.count; s++) {
    if (map.start[s + 1] - map.start[s] !== 1 || map.atoms[map.start[s]] !== s) throw new Error('charge layout: the store must hold one site per atom, in atom order');
  }
  const groups: SiteLayout['groups'] = [];
  let sameGroups = true;
  for (const g of layout.groups) {
    const byCharge = new Map<number, number[]>();
    for (const s of g.sites) {
      if (q[s] === 0) continue;
      if (!byCharge.has(q[s])) byCharge.set(q[s], []);
      byCharge.get(q[s])!.push(s);
    }
    if (byCharge.size === 0) continue;
    if (byCharge.size === 1 && [...byCharge.values()][0].length === g.sites.length) {
      groups.push({ label: g.label, sites: g.sites, charge: [...byCharge.keys()][0] });
      continue;
    }
    sameGroups = false;
    for (const [c, sites] of byCharge) groups.push({ label: `${g.label}(${c > 0 ? '+' : ''}${Number(c.toPrecision(6))})`, sites: Int32Array.from(sites), charge: c });
  }
  return { map, groups, molecules: layout.molecules, notes: [], siteCharges: Float64Array.from(q), sameGroups };
}
