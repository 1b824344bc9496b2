// The 3-D view of massmodel's HTML report: the model's parts coloured by group, the CG marker, the principal axes
// scaled by the radii of gyration, axle lines, contact points and slot envelopes, rotatable with the mouse.
// Data come from a <script type="application/json" id="mm-scene"> element written by massmodel.page.scene3d:
// lengths in metres, model axes; arrays as base64 little-endian Float32 / Uint32.
// Built into one script at build time (npm run build) and inlined into every page; no network access.
import {
  AmbientLight,
  BufferAttribute,
  BufferGeometry,
  Color,
  DirectionalLight,
  Group,
  LineBasicMaterial,
  LineSegments,
  Mesh,
  MeshBasicMaterial,
  MeshLambertMaterial,
  PerspectiveCamera,
  Scene,
  SphereGeometry,
  Vector3,
  WebGLRenderer,
} from "three";
import { OrbitControls } from "three/addons/controls/OrbitControls.js";

function decode(text, Kind) {
  const bytes = Uint8Array.from(atob(text), (c) => c.charCodeAt(0));
  return new Kind(bytes.buffer);
}

function lines(segments, colour, width) {
  const geometry = new BufferGeometry();
  geometry.setAttribute("position", new BufferAttribute(segments, 3));
  return new LineSegments(geometry, new LineBasicMaterial({ color: new Color(colour), linewidth: width }));
}

function partMesh(group) {
  const geometry = new BufferGeometry();
  geometry.setAttribute("position", new BufferAttribute(decode(group.positions, Float32Array), 3));
  geometry.setIndex(new BufferAttribute(decode(group.indices, Uint32Array), 1));
  geometry.computeVertexNormals();
  const material = new MeshLambertMaterial({ color: new Color(group.colour), flatShading: true });
  return new Mesh(geometry, material);
}

function start(host, data) {
  const width = host.clientWidth || 800;
  const height = host.clientHeight || 480;
  const renderer = new WebGLRenderer({ antialias: true, preserveDrawingBuffer: true });
  renderer.setPixelRatio(window.devicePixelRatio || 1);
  renderer.setSize(width, height);
  renderer.setClearColor(new Color(data.background), 1);
  host.appendChild(renderer.domElement);

  const scene = new Scene();
  scene.add(new AmbientLight(0xffffff, 1.2));
  const sun = new DirectionalLight(0xffffff, 1.6);
  scene.add(sun);

  const byName = {};
  for (const g of data.groups) {
    const mesh = partMesh(g);
    mesh.name = g.name;
    byName[g.name] = mesh;
    scene.add(mesh);
  }
  const marks = new Group();
  const cg = new Mesh(new SphereGeometry(data.marker_radius, 24, 16), new MeshBasicMaterial({ color: new Color(data.cg_colour) }));
  cg.position.fromArray(data.cg);
  cg.renderOrder = 10;
  cg.material.depthTest = false;
  marks.add(cg);
  marks.add(lines(decode(data.principal_axes, Float32Array), data.cg_colour, 2));
  if (data.axles) marks.add(lines(decode(data.axles, Float32Array), data.ink, 1));
  if (data.ground) marks.add(lines(decode(data.ground, Float32Array), data.ground_colour, 1));
  for (const s of data.slots) marks.add(lines(decode(s.segments, Float32Array), data.slot_colour, 1));
  scene.add(marks);

  const low = new Vector3().fromArray(data.bounds[0]);
  const high = new Vector3().fromArray(data.bounds[1]);
  const centre = low.clone().add(high).multiplyScalar(0.5);
  const size = high.clone().sub(low).length();
  const camera = new PerspectiveCamera(35, width / height, size / 100, size * 20);
  camera.up.fromArray(data.up);
  const forward = new Vector3().fromArray(data.forward);
  const left = new Vector3().fromArray(data.left);
  const up = new Vector3().fromArray(data.up);
  // Seen from the front left, above: the iso view of the picture sheet.
  const eye = forward.clone().multiplyScalar(0.9).add(left.clone().multiplyScalar(1.0)).add(up.clone().multiplyScalar(0.6));
  camera.position.copy(centre.clone().add(eye.normalize().multiplyScalar(size * 1.25)));
  const controls = new OrbitControls(camera, renderer.domElement);
  controls.target.copy(centre);
  controls.update();

  function draw() {
    sun.position.copy(camera.position);
    renderer.render(scene, camera);
  }
  controls.addEventListener("change", draw);
  draw();

  for (const box of document.querySelectorAll("input[data-mm-group]")) {
    box.addEventListener("change", () => {
      const mesh = byName[box.dataset.mmGroup];
      if (mesh) mesh.visible = box.checked;
      draw();
    });
  }
  const reset = document.getElementById("mm-view-reset");
  if (reset) reset.addEventListener("click", () => { controls.reset(); draw(); });
  window.addEventListener("resize", () => {
    const w = host.clientWidth || width;
    const h = host.clientHeight || height;
    camera.aspect = w / h;
    camera.updateProjectionMatrix();
    renderer.setSize(w, h);
    draw();
  });
  host.dataset.ready = "yes";
}

const holder = document.getElementById("mm-view");
const source = document.getElementById("mm-scene");
if (holder && source) {
  try {
    start(holder, JSON.parse(source.textContent));
  } catch (err) {
    holder.dataset.ready = "failed";
    holder.textContent = "The 3-D view could not start in this browser: " + err.message;
  }
}
