/**
 * The registry of the page's views, in tab order. To add a view: write views/<name>.ts
 * exporting a View ({ name, label, key, render(el, ctx) }) and list it here.
 */
import type { View } from '../context.ts';
import { skyView } from './sky.ts';
import { shapeView } from './shape.ts';
import { sizeView } from './size.ts';
import { sensorSideView } from './sensor-side.ts';
import { zonePsfView } from './zone-psf.ts';
import { findingsView } from './findings.ts';
import { compareView } from './compare.ts';
import { sweepView } from './sweep.ts';
import { focusPairView } from './focuspair.ts';
import { distortionView } from './distortion.ts';
import { throughFocusView } from './through-focus.ts';

export const VIEWS: readonly View[] = [
  skyView, shapeView, sizeView, sensorSideView, zonePsfView, findingsView, compareView, sweepView, focusPairView, distortionView, throughFocusView,
];

export function viewNamed(name: string): View | undefined {
  return VIEWS.find((v) => v.name === name);
}
