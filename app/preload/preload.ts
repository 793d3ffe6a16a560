/**
 * The preload script of the desktop window (sandboxed): exposes the bridge as window.skyloupe
 * through contextBridge. Nothing else of Electron or Node reaches the page.
 */
import { contextBridge, ipcRenderer, type IpcRendererEvent } from 'electron';
import { CHANNELS, type FrameFile, type MenuCommand, type Progress, type SkyloupeBridge } from './bridge.ts';

const bridge: SkyloupeBridge = {
  config: () => ipcRenderer.invoke(CHANNELS.config),
  analyze: (file, optics) => ipcRenderer.invoke(CHANNELS.analyze, file.name, file.bytes, optics),
  analyzeDemo: (optics) => ipcRenderer.invoke(CHANNELS.analyzeDemo, optics),
  onProgress(cb) {
    const h = (_e: IpcRendererEvent, p: Progress) => cb(p);
    ipcRenderer.on(CHANNELS.progress, h);
    return () => { ipcRenderer.removeListener(CHANNELS.progress, h); };
  },
  cancel: () => ipcRenderer.invoke(CHANNELS.cancel),
  stamp: (id, i) => ipcRenderer.invoke(CHANNELS.stamp, id, i),
  compare: (a, b) => ipcRenderer.invoke(CHANNELS.compare, a, b),
  sweep: (points) => ipcRenderer.invoke(CHANNELS.sweep, points),
  forgetOptics: (camera) => ipcRenderer.invoke(CHANNELS.forgetOptics, camera),
  focusPair: (a, b, stepUm) => ipcRenderer.invoke(CHANNELS.focusPair, a, b, stepUm),
  exportReport: (id, kind) => ipcRenderer.invoke(CHANNELS.exportReport, id, kind),
  savePng: (filename, bytes) => ipcRenderer.invoke(CHANNELS.savePng, filename, bytes),
  openFileDialog: () => ipcRenderer.invoke(CHANNELS.openFileDialog),
  onCommand(cb) {
    const h = (_e: IpcRendererEvent, cmd: MenuCommand, file?: FrameFile) => cb(cmd, file);
    ipcRenderer.on(CHANNELS.command, h);
    return () => { ipcRenderer.removeListener(CHANNELS.command, h); };
  },
};

contextBridge.exposeInMainWorld('skyloupe', bridge);
