// Live comparisons of the WAV, FLAC, HDF5 and MAT-file readers with the tools themselves: files written now by sox, ffmpeg,
// the flac encoder, h5py and scipy.io, decoded by sox, `flac -d`, h5py and scipy.io, compared sample for sample; and an RF64 file past 4 GiB read whole.
import { execFileSync } from 'node:child_process';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { openRecording } from '../../stages/read/open.js';
import { sparseRf64 } from '../format-fixtures.js';
import { fixture, readAll, readJson, tempDir } from '../helpers.js';
import { requirePython, requireTool } from './tools.js';

/** Interleaved little-endian int32 → per-channel values / 2^31 (sox's internal sample, exact for ≤ 32-bit codes). */
function int32Channels(raw: Buffer, channels: number, scale = 2 ** 31): Float64Array[] {
  const v = new Int32Array(raw.buffer.slice(raw.byteOffset, raw.byteOffset + raw.byteLength));
  const frames = v.length / channels;
  return Array.from({ length: channels }, (_, c) => Float64Array.from({ length: frames }, (_, i) => v[i * channels + c] / scale));
}

async function expectSame(path: string, want: Float64Array[], options = {}) {
  const { channels } = await readAll(path, options);
  expect(channels.length).toBe(want.length);
  for (let c = 0; c < want.length; c++) expect(Float64Array.from(channels[c])).toEqual(want[c]);
}

describe('readers against the tools, live', () => {
  it('WAV written by sox and ffmpeg (RIFX, G.711, 24-bit, RF64) equals what sox or numpy decode', async () => {
    const sox = requireTool('sox'), ffmpeg = requireTool('ffmpeg'), python = requirePython('numpy');
    const dir = tempDir();
    const cases: [string, string[]][] = [['rifx.wav', ['-b', '24', '-e', 'signed-integer', '-B']], ['ulaw.wav', ['-e', 'mu-law']], ['alaw.wav', ['-e', 'a-law']], ['u8.wav', ['-b', '8', '-e', 'unsigned-integer']]];
    for (const [name, args] of cases) {
      const path = join(dir, name);
      execFileSync(sox, ['-n', '-r', '16000', '-c', '2', ...args, path, 'synth', '0.2', 'sine', '300', 'whitenoise', 'vol', '0.9']);
      await expectSame(path, int32Channels(execFileSync(sox, [path, '-t', 'raw', '-e', 'signed-integer', '-b', '32', '-L', '-'], { maxBuffer: 1 << 26 }), 2));
    }
    const rf64 = join(dir, 'rf64.wav');
    execFileSync(ffmpeg, ['-v', 'error', '-f', 'lavfi', '-i', 'sine=frequency=700:sample_rate=48000:duration=0.3', '-ac', '3', '-c:a', 'pcm_s24le', '-rf64', 'always', rf64]);
    // numpy reads the data chunk as ffmpeg's pcm_s24le lays it out, left-justified into int32.
    const raw = execFileSync(python, ['-c', `import sys,numpy as np
b=open(sys.argv[1],'rb').read(); at=b.index(b'data')+8
x=np.frombuffer(b[at:],dtype=np.uint8); x=x[:len(x)//3*3].reshape(-1,3)
v=(x[:,0].astype(np.int32)<<8)|(x[:,1].astype(np.int32)<<16)|(x[:,2].astype(np.int32)<<24)
sys.stdout.buffer.write(v.astype('<i4').tobytes())`, rf64], { maxBuffer: 1 << 26 });
    await expectSame(rf64, int32Channels(raw, 3));
  });

  it('FLAC written by the flac encoder at 16, 24 and 32 bits equals `flac -d` sample for sample', async () => {
    const sox = requireTool('sox'), flac = requireTool('flac');
    const dir = tempDir();
    for (const [bits, level] of [[16, '-8'], [24, '-5'], [32, '-3']] as const) {
      const wav = join(dir, `in${bits}.wav`), path = join(dir, `x${bits}.flac`), out = join(dir, `x${bits}.raw`);
      execFileSync(sox, ['-n', '-r', '44100', '-c', '2', '-b', String(bits), '-e', 'signed-integer', wav, 'synth', '0.5', 'sine', '440', 'pinknoise', 'vol', '0.95']);
      execFileSync(flac, ['-s', '-f', level, '-o', path, wav]);
      execFileSync(flac, ['-s', '-d', '-f', '--force-raw-format', '--endian=little', '--sign=signed', '-o', out, path]);
      const b = readFileSync(out), width = bits / 8;
      // The raw output's codes, widened to int32 (left-justified) so one comparison serves every depth.
      const wide = Buffer.alloc((b.length / width) * 4);
      for (let i = 0; i < b.length / width; i++) wide.writeInt32LE(b.readIntLE(i * width, width) * 2 ** (32 - bits), i * 4);
      await expectSame(path, int32Channels(wide, 2));
    }
  });

  it('HDF5 written by h5py (chunked, gzip) equals what h5py reads', async () => {
    const python = requirePython('h5py', 'numpy');
    const path = join(tempDir(), 'x.h5');
    const values = execFileSync(python, ['-c', `import sys,h5py,numpy as np
rng=np.random.default_rng(7); x=rng.integers(-2**31,2**31,(20000,3),dtype=np.int64).astype('<i4')
with h5py.File(sys.argv[1],'w') as f:
    d=f.create_dataset('run/data',data=x,chunks=(4096,3),compression='gzip'); d.attrs['rate']=25600.0
with h5py.File(sys.argv[1],'r') as f: sys.stdout.buffer.write(np.asarray(f['run/data'][...],dtype='<i4').tobytes())`, path], { maxBuffer: 1 << 26 });
    await expectSame(path, int32Channels(values, 3), { hdf5: { datasets: ['/run/data'], channel_axis: 1, sample_rate_attribute: 'rate', start_time_attribute: null } });
  });

  it('MAT-files written by scipy.io.savemat (compressed and not) and hdf5storage (version 7.3), every integer class and both float classes, equal what they read back', async () => {
    const python = requirePython('scipy', 'numpy', 'hdf5storage');
    const dir = tempDir();
    // Each class as samples × channels (compressed) and as channels × samples (uncompressed); loadmat's values normalised as quern does.
    const classes = ['int8', 'uint8', 'int16', 'uint16', 'int32', 'uint32', 'single', 'double'];
    const values = execFileSync(python, ['-c', `import sys,numpy as np,scipy.io as sio,hdf5storage
rng=np.random.default_rng(11); out=[]
for i,cls in enumerate(sys.argv[2:]):
    dt={'single':np.float32,'double':np.float64}.get(cls,cls); dt=np.dtype(dt)
    x=rng.uniform(-1,1,(5000,3)).astype(dt) if dt.kind=='f' else rng.integers(np.iinfo(dt).min,np.iinfo(dt).max,(5000,3),endpoint=True).astype(dt)
    sio.savemat(f'{sys.argv[1]}/{cls}-v7.mat',{'x':x,'fs':48000.0},do_compression=True)
    sio.savemat(f'{sys.argv[1]}/{cls}-v6.mat',{'x':x.T.copy(),'fs':np.int16(4800)},do_compression=False)
    hdf5storage.savemat(f'{sys.argv[1]}/{cls}-v73.mat',{'x':x,'fs':48000.0},format='7.3',matlab_compatible=True)
    y=sio.loadmat(f'{sys.argv[1]}/{cls}-v7.mat')['x']; z=sio.loadmat(f'{sys.argv[1]}/{cls}-v6.mat')['x'].T
    assert np.array_equal(y,z) and np.array_equal(y,hdf5storage.loadmat(f'{sys.argv[1]}/{cls}-v73.mat')['x'])
    if dt.kind in 'iu':
        full=2.0**(8*dt.itemsize-1); y=(y.astype(float)-(full if dt.kind=='u' else 0))/full
    out.append(np.asarray(y,dtype='<f8').T.tobytes())
sys.stdout.buffer.write(b''.join(out))`, dir, ...classes], { maxBuffer: 1 << 26 });
    const all = new Float64Array(values.buffer.slice(values.byteOffset, values.byteOffset + values.byteLength));
    for (const [i, cls] of classes.entries()) {
      const want = [0, 1, 2].map((c) => all.subarray((i * 3 + c) * 5000, (i * 3 + c + 1) * 5000));
      const layout = (channel_axis: 0 | 1) => ({ mat: { variables: ['x'], channel_axis, sample_rate_variable: 'fs', start_time_variable: null } });
      await expectSame(join(dir, `${cls}-v7.mat`), want, layout(1));
      await expectSame(join(dir, `${cls}-v6.mat`), want, layout(0));
      await expectSame(join(dir, `${cls}-v73.mat`), want, layout(1));
    }
  });

  it('level 4 MAT-files written by scipy.io.savemat(format=\'4\') in every stored type equal what scipy.io.loadmat reads, as doubles', async () => {
    const python = requirePython('scipy', 'numpy');
    const dir = tempDir();
    const types = ['float64', 'float32', 'int32', 'int16', 'uint16', 'uint8'];
    const values = execFileSync(python, ['-c', `import sys,numpy as np,scipy.io as sio
rng=np.random.default_rng(4); out=[]
for t in sys.argv[2:]:
    dt=np.dtype(t); x=rng.uniform(-1,1,(3000,2)).astype(dt) if dt.kind=='f' else rng.integers(np.iinfo(dt).min,np.iinfo(dt).max,(3000,2),endpoint=True).astype(dt)
    sio.savemat(f'{sys.argv[1]}/{t}.mat',{'x':x,'fs':1000.0},format='4')
    y=sio.loadmat(f'{sys.argv[1]}/{t}.mat')['x']; assert y.dtype==dt and np.array_equal(y,x)
    out.append(np.asarray(y,dtype='<f8').T.tobytes())
sys.stdout.buffer.write(b''.join(out))`, dir, ...types], { maxBuffer: 1 << 24 });
    const all = new Float64Array(values.buffer.slice(values.byteOffset, values.byteOffset + values.byteLength));
    for (const [i, t] of types.entries()) {
      const want = [0, 1].map((c) => all.subarray((i * 2 + c) * 3000, (i * 2 + c + 1) * 3000));
      await expectSame(join(dir, `${t}.mat`), want, { mat: { variables: ['x'], channel_axis: 1, sample_rate_variable: 'fs', start_time_variable: null } });
    }
  });

  it('MAT-files\' channel names, beyond ASCII too, as scipy.io.loadmat and hdf5storage.loadmat read them: cell arrays and char matrices', async () => {
    const python = requirePython('scipy', 'numpy', 'hdf5storage');
    const dir = tempDir();
    const names = ['acc_x', 'druck_ü', 'mic_µPa'];
    const read = execFileSync(python, ['-c', `import sys,json,numpy as np,scipy.io as sio,hdf5storage
d=sys.argv[1]; names=json.loads(sys.argv[2]); x=np.zeros((100,3))
sio.savemat(f'{d}/cells-v7.mat',{'x':x,'fs':100.0,'names':np.array(names,dtype=object)},do_compression=True)
sio.savemat(f'{d}/rows-v6.mat',{'x':x,'fs':100.0,'names':np.array(names)},do_compression=False)
hdf5storage.savemat(f'{d}/cells-v73.mat',{'x':x,'fs':100.0,'names':np.array(names,dtype=object)},format='7.3',matlab_compatible=True)
out={'cells-v7.mat':[str(c[0]) for c in sio.loadmat(f'{d}/cells-v7.mat')['names'].ravel()],
     'rows-v6.mat':[str(r).rstrip() for r in sio.loadmat(f'{d}/rows-v6.mat')['names']],
     'cells-v73.mat':[str(np.asarray(c).ravel()[0]) for c in np.asarray(hdf5storage.loadmat(f'{d}/cells-v73.mat')['names']).ravel()]}
print(json.dumps(out))`, dir, JSON.stringify(names)], { encoding: 'utf8' });
    for (const [file, want] of Object.entries(JSON.parse(read) as Record<string, string[]>)) {
      expect(want, file).toEqual(names);
      const { rec } = await readAll(join(dir, file), { mat: { variables: ['x'], channel_axis: 1, sample_rate_variable: 'fs', start_time_variable: null, channel_names_variable: 'names' } });
      expect(rec.channelNames, file).toEqual(want);
    }
  });

  it('streams an RF64 file past 4 GiB to its last sample (a sparse file)', async () => {
    const big = readJson(fixture('formats', 'expected.json')).rf64_big;
    const path = sparseRf64();
    const rec = await openRecording(path);
    let n = 0, last: Float64Array = new Float64Array(0), nonZero = 0;
    for await (const [ch] of rec.chunks()) {
      n += ch.length;
      last = Float64Array.from(ch.subarray(Math.max(0, ch.length - 5)));
      for (let i = 0; i < ch.length; i++) if (ch[i] !== 0) nonZero++;
    }
    await rec.close();
    expect(n).toBe(big.data_bytes / 8);
    expect(Array.from(last)).toEqual(big.tail);
    expect(nonZero).toBe(big.head.filter((v: number) => v !== 0).length + big.tail.filter((v: number) => v !== 0).length);
    writeFileSync(path, ''); // give the space back at once
  });
});
