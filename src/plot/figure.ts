/**
 * Figures: plotly.js specs with a house style, shown in notebooks as self-contained
 * HTML and saved for print through a headless Chromium (plot/export.ts).
 *
 * How plotly.js reaches the page: every figure carries a gzip + base64 copy of
 * plotly.js-dist-min and a small loader that uses window.Plotly when it is already
 * there and otherwise decompresses its own copy once per page. So an executed
 * notebook, reopened, exported to HTML or with cells re-run or cleared in any order,
 * shows every figure offline (about 1.4 MB per figure; the price of robustness).
 */
import { readFileSync } from 'node:fs';
import { gzipSync } from 'node:zlib';
import { inspect } from 'node:util';
import { escapeHtml, tslabDisplay } from '../notebook/html';
import { sentenceCase, logAxis, plainText } from './labels';

/**
 * Class colours: the colour-blind-safe set of Wong (2011) "Points of view: Color blindness",
 * Nat Methods 8:441, in an order of our own (blue, vermillion, bluish green, reddish
 * purple, orange, sky blue, black); its yellow is left out for low contrast on white.
 */
export const PALETTE = ['#0072B2', '#D55E00', '#009E73', '#CC79A7', '#E69F00', '#56B4E9', '#000000'];
/**
 * A legend entry with no data (explains a colour, a line style, a symbol or a shaded area): one point at null,
 * never hovered. `style` adds the mode, marker, line and any other trace keys.
 */
export function legendOnly(name: string, style: Record<string, unknown>): Record<string, unknown> {
  return { type: 'scatter', x: [null], y: [null], name, hoverinfo: 'skip', showlegend: true, ...style };
}
/** Marker shapes paired with PALETTE, so classes also differ without colour (and in greyscale print). */
export const MARKERS = ['circle', 'square', 'diamond', 'triangle-up', 'triangle-down', 'cross', 'x'];
/**
 * Sequential scale for a varied condition (intensity, concentration, temperature,
 * distance): viridis (van der Walt and Smith 2015, matplotlib; perceptually uniform and
 * readable with colour-vision deficiencies), stops as plotly.js ships them, cut at 0.82
 * so that the light end stays visible on white.
 */
export const SEQUENTIAL: [number, string][] = [
  [0, '#440154'],
  [0.06274509803921569, '#48186a'],
  [0.12549019607843137, '#472d7b'],
  [0.18823529411764706, '#424086'],
  [0.25098039215686274, '#3b528b'],
  [0.3137254901960784, '#33638d'],
  [0.3764705882352941, '#2c728e'],
  [0.4392156862745098, '#26828e'],
  [0.5019607843137255, '#21918c'],
  [0.5647058823529412, '#1fa088'],
  [0.6274509803921569, '#28ae80'],
  [0.6901960784313725, '#3fbc73'],
  [0.7529411764705882, '#5ec962'],
  [0.8156862745098039, '#84d44b'],
];
export const FONT = 'Helvetica, Arial, sans-serif';

/** Colour of the sequential scale at u in [0, 1] (interpolated in RGB between the stops). */
export function sequentialColour(u: number): string {
  const x = Math.min(1, Math.max(0, u)) * SEQUENTIAL[SEQUENTIAL.length - 1][0];
  let k = 0;
  while (k < SEQUENTIAL.length - 2 && SEQUENTIAL[k + 1][0] < x) k++;
  const [x0, c0] = SEQUENTIAL[k],
    [x1, c1] = SEQUENTIAL[k + 1];
  const f = x1 > x0 ? (x - x0) / (x1 - x0) : 0;
  const rgb = (c: string) => [1, 3, 5].map((i) => parseInt(c.slice(i, i + 2), 16));
  const a = rgb(c0),
    b = rgb(c1);
  return (
    '#' +
    a
      .map((v, i) =>
        Math.round(v + (b[i] - v) * f)
          .toString(16)
          .padStart(2, '0'),
      )
      .join('')
  );
}
/** The sequential scale as a plotly colorscale (0..1). */
export function sequentialScale(): [number, string][] {
  const top = SEQUENTIAL[SEQUENTIAL.length - 1][0];
  return SEQUENTIAL.map(([x, c]) => [x / top, c]);
}

export interface PlotlySpec {
  data: Record<string, unknown>[];
  layout: Record<string, unknown>;
  config?: Record<string, unknown>;
}

let plotlySource: string | undefined;
let plotlyPacked: string | undefined;
/** plotly.js-dist-min's source. */
export function plotlyJs(): string {
  if (!plotlySource) plotlySource = readFileSync(require.resolve('plotly.js-dist-min'), 'utf8');
  return plotlySource;
}
function packed(): string {
  if (!plotlyPacked) plotlyPacked = gzipSync(Buffer.from(plotlyJs()), { level: 9 }).toString('base64');
  return plotlyPacked;
}

let counter = 0;

/** Screen sizes (px at 96 px/inch): body text 12 px = 9 pt. Print sizes are set in pt (plot/export.ts). */
export const SCREEN_FONT = { base: 12, tick: 11, title: 14 };

/** Where a legend starts (top right inside the plot area); LAYOUT_FIT_JS moves it if it would cover data. */
const LEGEND_INSIDE = {
  orientation: 'v',
  xref: 'paper',
  yref: 'paper',
  x: 1,
  y: 1,
  xanchor: 'right',
  yanchor: 'top',
  bgcolor: 'rgba(255,255,255,0.85)',
};

const axis = (title: string) => ({
  title: { text: title, standoff: 6 },
  showline: true,
  linecolor: '#333',
  linewidth: 1,
  ticks: 'outside',
  ticklen: 4,
  tickwidth: 1,
  tickcolor: '#333',
  zeroline: false,
  showgrid: false,
  automargin: false,
  tickangle: 0,
  tickfont: { size: SCREEN_FONT.tick },
});

/**
 * Layout of the house style from plotly markup (user text already escaped with
 * plotlyText): title at the top, legend in a row under the x-axis title, margins found
 * in the browser by measuring the text (LAYOUT_FIT_JS) so nothing overlaps.
 */
export function layoutFor(
  title: string,
  x: string,
  y: string,
  extra: Record<string, unknown> = {},
): Record<string, unknown> {
  const { xaxis, yaxis, ...rest } = extra as { xaxis?: object; yaxis?: object };
  return {
    title: {
      text: title,
      font: { size: SCREEN_FONT.title },
      x: 0.5,
      xanchor: 'center',
      xref: 'container',
      y: 0.98,
      yref: 'container',
      yanchor: 'top',
    },
    font: { family: FONT, size: SCREEN_FONT.base, color: '#222' },
    colorway: PALETTE,
    paper_bgcolor: '#fff',
    plot_bgcolor: '#fff',
    xaxis: { ...axis(x), ...(xaxis ?? {}) },
    yaxis: { ...axis(y), ...(yaxis ?? {}) },
    legend: { ...LEGEND_INSIDE, traceorder: 'normal', tracegroupgap: 0 },
    margin: { l: 70, r: 20, t: 50, b: 60 },
    width: 640,
    height: 420,
    ...rest,
  };
}

/**
 * Base layout of the house style. The title and axis titles are plotly markup (so
 * `IC<sub>50</sub>` works): pass user text through plotlyText first. The first letter
 * is set upper case (sentence case). Width and height in px.
 * @example baseLayout(`Sweeps of ${plotlyText(name)}`, 'time (ms)', 'signal (µV)')
 */
export function baseLayout(
  title: string,
  x: string,
  y: string,
  extra: Record<string, unknown> = {},
): Record<string, unknown> {
  return layoutFor(sentenceCase(title), sentenceCase(x), sentenceCase(y), extra);
}

/**
 * The least share of the canvas the plot area keeps (width, height) when the legend goes outside it: at 85 x 60 mm
 * that is at least 34 x 27 mm of data. Tick labels and axis titles at 7-8 pt already take about a fifth of each
 * dimension of a single-column panel, and a legend column beside the plot at 7 pt about a third of its width, so
 * less than this would leave the data smaller than the text about them. Our choice (no journal states a number);
 * the print test checks it on every figure at every column width.
 */
export const PLOT_MIN = { w: 0.4, h: 0.45 };

/**
 * Runs in the page after Plotly.newPlot: measures every text box and sets the margins
 * so that tick labels, axis titles and the title each get their own space inside the
 * canvas; wraps a title longer than its space onto two lines. The legend goes into a
 * corner of the plot area that holds no data (markers, line vertices, error bars), else
 * in rows under the x-axis title. Resolves when the layout is stable.
 */
export const LAYOUT_FIT_JS = String.raw`window.__fascicleFit=window.__fascicleFit||function(gd,o){
var PLOT_MIN=${JSON.stringify(PLOT_MIN)};
var P=window.Plotly,pad=(o&&o.pad)||5,gap=(o&&o.gap)||5,minW=(o&&o.minW)||PLOT_MIN.w,minH=(o&&o.minH)||PLOT_MIN.h,wrapped={};
function R(){return gd.querySelector('.main-svg').getBoundingClientRect();}
function rel(r,Q){return{l:r.left-Q.left,r:r.right-Q.left,t:r.top-Q.top,b:r.bottom-Q.top};}
function boxes(test){var Q=R(),out=[];
  Array.prototype.forEach.call(gd.querySelectorAll('text'),function(e){if(!(e.textContent||'').trim())return;
    var c=(e.parentNode&&e.parentNode.getAttribute('class'))||'';if(!test(c,e))return;var r=e.getBoundingClientRect();
    if(r.width||r.height)out.push(rel(r,Q));});return out;}
function ext(bs){return bs.reduce(function(a,b){return{l:Math.min(a.l,b.l),r:Math.max(a.r,b.r),t:Math.min(a.t,b.t),b:Math.max(a.b,b.b)};},
  {l:1e9,r:-1e9,t:1e9,b:-1e9});}
function wrap(s){if(typeof s!=='string'||/<br>/i.test(s))return null;var w=s.split(' ');if(w.length<2)return null;
  var best=1,bd=1e9,n=0;for(var i=1;i<w.length;i++){n+=w[i-1].length+1;var d=Math.abs(n-s.length/2);if(d<bd){bd=d;best=i;}}
  var a=w.slice(0,best).join(' ');if((a.match(/</g)||[]).length!==(a.match(/>/g)||[]).length)return null;
  return a+'<br>'+w.slice(best).join(' ');}
function vis(s){return s.replace(/<[^>]*>/g,'').replace(/&[a-z#0-9]+;/gi,'x').length;}
function wrapAt(s,n){if(typeof s!=='string'||/<br>/i.test(s))return null;var w=[],lines=[],cur='';
  // a number keeps its unit on its line ("20.7 m/s", "27.6 µM")
  s.split(' ').forEach(function(t){var p=w[w.length-1];if(p&&/\d$/.test(p)&&!/^\d/.test(t)&&vis(t)<=6)w[w.length-1]=p+' '+t;
    else w.push(t);});
  for(var i=0;i<w.length;i++){var t=cur?cur+' '+w[i]:w[i];if(cur&&vis(t)>n){lines.push(cur);cur=w[i];}else cur=t;}
  // no orphan of three letters or fewer on a last line ("95% CI of / fit")
  lines.push(cur);if(lines.length>1&&vis(lines[lines.length-1])<=3){var last=lines.pop();lines[lines.length-1]+=' '+last;}
  if(lines.length<2||lines.some(function(l){return(l.match(/</g)||[]).length!==(l.match(/>/g)||[]).length;}))
    return null;return lines.join('<br>');}
function legendBox(){var lg=gd.querySelector('.legend');if(!lg||gd._fullLayout.showlegend===false)return null;
  var b=lg.querySelector('rect.bg')||lg;var r=rel(b.getBoundingClientRect(),R());return r.r-r.l>0?r:null;}
function titleOf(a){return a&&a.title?(typeof a.title==='string'?a.title:a.title.text):'';}
function update(mode){var below=mode==='below',right=mode==='right',fl=gd._fullLayout,s=fl._size,W=fl.width,H=fl.height,u={};
  var isX=function(c){return/^x\d*tick$/.test(c)||/^g-x\d*title$/.test(c);},isY=function(c){return/^y\d*tick$/.test(c)||/^g-y\d*title$/.test(c);};
  var xb=ext(boxes(isX)),yb=ext(boxes(isY)),tb=boxes(function(c){return c==='g-gtitle';});
  var plotB=s.t+s.h,plotR=s.l+s.w,titleT=fl.title&&fl.title.text&&tb.length?ext(tb):null;
  var an=ext(boxes(function(c,e){return!!e.closest('.annotation');}));
  if(an.t<1e8){yb={l:yb.l,r:yb.r,t:Math.min(yb.t,an.t),b:yb.b};xb={l:xb.l,r:xb.r,t:xb.t,b:Math.max(xb.b,an.b)};}
  if(titleT&&titleT.r-titleT.l>W-2*pad&&!wrapped.t){wrapped.t=1;var t2=wrap(fl.title.text);if(t2)u['title.text']=t2;}
  boxes(function(c){return/^g-xtitle$/.test(c);}).forEach(function(b){if(b.r-b.l>s.w&&!wrapped.x){wrapped.x=1;
    var t=wrap(titleOf(gd.layout.xaxis));if(t)u['xaxis.title.text']=t;}});
  Array.prototype.forEach.call(gd.querySelectorAll('[class^="g-y"][class$="title"]'),function(g){
    var k=/^g-y(\d*)title$/.exec(g.getAttribute('class')||''),e=g.querySelector('text');if(!k||!e)return;
    var a='yaxis'+k[1],ax=fl[a],r=e.getBoundingClientRect(),len=ax&&ax._length?ax._length:s.h;
    if(r.height>len&&!wrapped[a]){wrapped[a]=1;var t=wrap(titleOf(gd.layout[a]));if(t)u[a+'.title.text']=t;}});
  var lb=below?legendBox():null,lh=lb?lb.b-lb.t:0,top=pad;
  var sc=gd.querySelector('.slider-container'),sh=0,xe=xb.b>-1e8?Math.max(0,xb.b-plotB):0;
  if(sc&&fl.sliders&&fl.sliders.length){var sr=rel(sc.getBoundingClientRect(),R());sh=sr.b-sr.t;
    var sy=-(xe+gap)/s.h;if(Math.abs((fl.sliders[0].y-sy)*s.h)>0.5)u['sliders[0].y']=sy;}
  if(titleT){u['title.y']=Math.min(1,fl.title.y-(pad-titleT.t)/H);top=pad+(titleT.b-titleT.t)+gap;}
  var xo=Math.max(0,xb.r>-1e8?xb.r-plotR:0),rb=right?legendBox():null,lw=rb?rb.r-rb.l+Math.max(gap,xo+gap):0;
  var m={l:Math.ceil((yb.l<1e8?s.l-yb.l:0)+pad),r:Math.ceil(Math.max(xo,lw)+pad),
    t:Math.ceil(top+Math.max(0,yb.t<1e8?s.t-yb.t:0)),b:Math.ceil(xe+(sh?gap+sh:0)+(lh?gap+lh:0)+pad)};
  var cur=gd.layout.margin||{},ch=Object.keys(u).some(function(k){return k!=='title.y';});
  if(below&&lb){var lx=-(s.l-pad)/s.w,ly=-(xe+gap+(sh?sh+gap:0))/s.h,L=fl.legend;
    if(Math.abs((L.x-lx)*s.w)>0.5||Math.abs((L.y-ly)*s.h)>0.5){u['legend.x']=lx;u['legend.y']=ly;ch=true;}}
  if(rb){var rx=1+Math.max(gap,xo+gap)/s.w,L2=fl.legend;
    if(Math.abs((L2.x-rx)*s.w)>0.5||L2.y!==1){u['legend.x']=rx;u['legend.y']=1;ch=true;}}
  ['l','r','t','b'].forEach(function(k){if(Math.abs((cur[k]||0)-m[k])>0.5)ch=true;});
  if(titleT&&Math.abs(fl.title.y-u['title.y'])*H>0.5)ch=true;
  if(!ch)return null;u.margin=Object.assign({},cur,m,{autoexpand:true});return u;}
function settle(mode,pass){var u=update(mode);if(!u||pass>=8)return Promise.resolve();
  return P.relayout(gd,u).then(function(){return settle(mode,pass+1);});}
function dataPoints(){var fl=gd._fullLayout,s=fl._size,out=[];
  (gd._fullData||[]).forEach(function(t){if(t.visible!==true||!t.x||!t.y||!t.x.length)return;
    var xa=fl[(t.xaxis||'x').replace('x','xaxis')],ya=fl[(t.yaxis||'y').replace('y','yaxis')];if(!xa||!ya)return;
    var n=Math.min(t.x.length,t.y.length),st=Math.max(1,Math.floor(n/3000)),prev=null,lines=/lines/.test(t.mode||'')||t.fill==='toself';
    var ey=t.error_y&&t.error_y.visible?t.error_y:null,mk=/markers/.test(t.mode||'')&&t.marker;
    function px(x,y){var cx=xa.d2c(x),cy=ya.d2c(y);if(cx==null||cy==null)return null;
      var a=xa._offset+xa.c2p(cx),b=ya._offset+ya.c2p(cy);return isFinite(a)&&isFinite(b)?[a,b]:null;}
    for(var i=0;i<n;i+=st){var p=px(t.x[i],t.y[i]);if(!p){prev=null;continue;}
      if(prev&&lines){var d=Math.hypot(p[0]-prev[0],p[1]-prev[1]),k=Math.ceil(d/3);
        for(var j=1;j<k;j++)out.push([prev[0]+(p[0]-prev[0])*j/k,prev[1]+(p[1]-prev[1])*j/k]);}
      out.push(p);prev=p;
      // a marker covers its size: its edges are obstacles too (a wide mean bar, an error-bar cap)
      if(mk){var r=(Array.isArray(t.marker.size)?+t.marker.size[i]:+t.marker.size)/2||0;if(r>1)out.push([p[0]-r,p[1]],[p[0]+r,p[1]],
        [p[0],p[1]-r],[p[0],p[1]+r]);}
      if(ey&&ey.array){var up=px(t.x[i],t.y[i]+(+ey.array[i]||0)),dn=px(t.x[i],t.y[i]-(+(ey.arrayminus||ey.array)[i]||0));
        if(up)out.push(up);if(dn)out.push(dn);}}});
  return out.filter(function(p){return p[0]>=s.l-1&&p[0]<=s.l+s.w+1&&p[1]>=s.t-1&&p[1]<=s.t+s.h+1;});}
function inside(){var L=legendBox(),fl=gd._fullLayout,s=fl._size;if(!L)return null;var w=L.r-L.l,h=L.b-L.t,e=3,m=4;
  if(w>0.65*s.w||h>0.7*s.h)return null;var pts=dataPoints(),fixed=[];
  // annotations (paper-anchored text) are obstacles that do not move with the axis range
  boxes(function(c,e){return!!e.closest('.annotation');}).forEach(function(b){for(var i=0;i<=4;i++)for(var j=0;j<=2;j++)
    fixed.push([b.l+(b.r-b.l)*i/4,b.t+(b.b-b.t)*j/2]);});
  function hits(P,l,t){return P.some(function(p){return p[0]>l-m&&p[0]<l+w+m&&p[1]>t-m&&p[1]<t+h+m;});}
  function at(c){return{'legend.x':c[0]?1-e/s.w:e/s.w,'legend.y':c[1]?1-e/s.h:e/s.h,'legend.xanchor':c[0]?'right':'left',
    'legend.yanchor':c[1]?'top':'bottom'};}
  var cs=[[1,1],[0,1],[1,0],[0,0]];
  for(var i=0;i<cs.length;i++){var c=cs[i],l=c[0]?s.l+s.w-e-w:s.l+e,t=c[1]?s.t+e:s.t+s.h-e-h;
    if(!hits(pts,l,t)&&!hits(fixed,l,t))return at(c);}
  // no free corner: give the y axis headroom (the data keep at least 60% of the height) and use a top corner
  var ya=fl.yaxis;if(!ya||ya.type==='category'||!ya.range||fl.yaxis2)return null;var best=null;
  [1,0].forEach(function(cx){var l=cx?s.l+s.w-e-w:s.l+e,top=1e9;if(hits(fixed,l,s.t+e))return;
    pts.forEach(function(p){if(p[0]>l-m&&p[0]<l+w+m)top=Math.min(top,p[1]);});
    var dB=s.t+s.h-top,f=dB>0?(s.h-e-h-2*m)/dB:1;if(f>=0.6&&(!best||f>best.f))best={f:Math.min(1,f),c:[cx,1]};});
  if(!best)return null;var r0=ya.range[0],r1=ya.range[1],u=at(best.c);
  if(best.f<1)u['yaxis.range']=[r0,r0+(r1-r0)/best.f];return u;}
var fl0=gd._fullLayout;
if(!fl0.showlegend||!gd.querySelector('.legend'))return settle(false,0);
var L0=fl0.legend,start=${JSON.stringify(LEGEND_INSIDE)},same=Object.keys(start).every(function(k){
  return L0[k]===start[k];}),u0={};Object.keys(start).forEach(function(k){u0['legend.'+k]=start[k];});
return (same?Promise.resolve():P.relayout(gd,u0)).then(function(){return settle(false,0);})
.then(function(){var c=inside();if(c)return P.relayout(gd,c).then(function(){return settle(false,0);});
  return outside();});
// outside the plot area: below it in rows, or to its right in a column, entries on one line or wrapped onto two;
// the first that leaves the plot area minW x minH of the canvas, else the one that leaves it the most
function outside(){var names=gd.data.map(function(t){return t.name;}),bar=!!gd.querySelector('.colorbar'),titles={};
  // titles as given: each candidate starts from them (a title wrapped for one layout may fit on one line in another)
  titles['title.text']=titleOf(gd.layout);Object.keys(gd.layout).forEach(function(k){
    if(/^[xy]axis\d*$/.test(k)&&titleOf(gd.layout[k]))titles[k+'.title.text']=titleOf(gd.layout[k]);});
  var cands=[['below',0],['right',0],['inside',18],['inside',12],['right',18],['right',12],['below',18],['below',12]]
    .filter(function(c){return!(bar&&c[0]==='right');});
  function names0(w){var idx=[],nm=[];gd.data.forEach(function(t,i){if(typeof names[i]!=='string'||t.showlegend===false)return;
    var n=w?(wrapAt(names[i],w)||names[i]):names[i];if(n!==t.name){idx.push(i);nm.push(n);}});
    return idx.length?P.restyle(gd,{name:nm},idx):Promise.resolve();}
  function apply(c){var s=gd._fullLayout._size;if(c[0]==='inside'){var u1={};wrapped={};
      Object.keys(titles).forEach(function(k){u1[k]=titles[k];});Object.keys(start).forEach(function(k){u1['legend.'+k]=start[k];});
      return names0(c[1]).then(function(){return P.relayout(gd,u1);}).then(function(){return settle(false,0);})
        .then(function(){var q=inside();if(!q)return'no';return P.relayout(gd,q).then(function(){return settle(false,0);});});}
    var u=c[0]==='below'?{'legend.orientation':'h','legend.x':-(s.l-pad)/s.w,
      'legend.y':-0.3,'legend.xanchor':'left','legend.yanchor':'top'}:{'legend.orientation':'v','legend.x':1.02,
      'legend.y':1,'legend.xanchor':'left','legend.yanchor':'top','legend.maxheight':gd._fullLayout.height-2*pad};
    u['legend.xref']='paper';u['legend.yref']='paper';u['legend.bgcolor']='rgba(0,0,0,0)';wrapped={};
    Object.keys(titles).forEach(function(k){u[k]=titles[k];});
    return names0(c[1]).then(function(){return P.relayout(gd,u);}).then(function(){return settle(c[0],0);});}
  // the share of the canvas the data keep; with several rows of subplots, the smallest row times the rows
  function score(){var fl=gd._fullLayout,s=fl._size,L=legendBox(),ok=!L||(L.l>=-0.5&&L.t>=-0.5&&L.r<=fl.width+0.5&&
    L.b<=fl.height+0.5);
    // every entry shown whole (a legend taller than its room scrolls: entries cut off at its edge)
    if(L&&ok)Array.prototype.forEach.call(gd.querySelectorAll('.legend text'),function(e){
      var r=rel(e.getBoundingClientRect(),R());if(r.r-r.l>0&&(r.t<L.t-1||r.b>L.b+1||r.b>fl.height+0.5))ok=false;});
    var ys=Object.keys(fl).filter(function(k){return/^yaxis\d*$/.test(k)&&fl[k]._length>0;});
    var h=ys.length>1?Math.min.apply(null,ys.map(function(k){return fl[k]._length;}))*ys.length:s.h;
    return ok?Math.min(s.w/fl.width/minW,h/fl.height/minH):-1;}
  // the first layout that leaves the data comfortably more than the least share, else the best of them all
  var best=null,i=0;
  function next(){if(i>=cands.length)return best?apply(best.c):Promise.resolve();var c=cands[i++];
    return apply(c).then(function(r){var v=r==='no'?-2:score();if(v>=1.2)return;if(!best||v>best.v)best={c:c,v:v};
      return next();});}
  return next();}
};`;

/**
 * The spec as it is drawn: every log axis without its own tick values gets ticks that
 * label full values (labels.ts logAxis over the data of that axis), so no figure shows
 * plotly's leading-digit labels ("5, 2, 10, 5, 2, 1").
 */
export function drawnSpec(spec: PlotlySpec): PlotlySpec {
  const L = spec.layout;
  let out: PlotlySpec | null = null;
  for (const k of Object.keys(L)) {
    const m = /^([xy])axis(\d*)$/.exec(k);
    const a = L[k] as { type?: string; tickvals?: unknown; tickmode?: string } | undefined;
    if (!m || !a || a.type !== 'log' || a.tickvals !== undefined || a.tickmode === 'linear') continue;
    const id = m[1] + m[2];
    const vals = spec.data
      .filter((t) => String(t[`${m[1]}axis`] ?? m[1]) === id)
      .flatMap((t) => (Array.isArray(t[m[1]]) ? (t[m[1]] as unknown[]) : []));
    const { type: _t, ...ticks } = logAxis(vals);
    void _t;
    if (!('tickvals' in ticks)) continue;
    out ??= { ...spec, layout: { ...L } };
    out.layout[k] = {
      ...a,
      ...ticks,
      ...((a as { range?: unknown }).range ? { range: (a as { range?: unknown }).range } : {}),
    };
  }
  return out ?? spec;
}

export class Figure {
  readonly name: string;
  readonly spec: PlotlySpec;
  constructor(name: string, spec: PlotlySpec) {
    this.name = name;
    this.spec = spec;
  }

  /** The spec as JSON with numbers rounded (for snapshots and small files). */
  specJson(digits = 6): string {
    return JSON.stringify(this.spec, (_k, v) =>
      typeof v === 'number' && Number.isFinite(v) && !Number.isInteger(v) ? Number(v.toPrecision(digits)) : v,
    );
  }

  /**
   * Self-contained HTML for a notebook output: a div, the spec, and the loader.
   * `library`: 'embedded' (default; works offline anywhere) or 'page' (assumes
   * window.Plotly, for pages that load it once, such as the bundle's HTML files).
   */
  toHTML(library: 'embedded' | 'page' | 'script-tag' = 'embedded', src = '../plotly.min.js'): string {
    const id = `fascicle-fig-${Date.now().toString(36)}-${(counter++).toString(36)}`;
    const spec = new Figure(this.name, drawnSpec(this.spec)).specJson().replace(/</g, '\\u003c');
    const { width, height } = this.spec.layout as { width?: number; height?: number };
    const div = `<div id="${id}" class="fascicle-figure" data-name="${escapeHtml(this.name)}" style="width:${width ?? 640}px;height:${height ?? 420}px"></div>`;
    const plot = `${LAYOUT_FIT_JS}var s=${spec};window.Plotly.newPlot(${JSON.stringify(id)},s.data,s.layout,Object.assign({displaylogo:false,responsive:false},s.config||{})).then(function(gd){return window.__fascicleFit(gd,{pad:6,gap:6});});`;
    if (library === 'page') return `${div}<script>${plot}</script>`;
    if (library === 'script-tag') return `<script src="${escapeHtml(src)}"></script>${div}<script>${plot}</script>`;
    const loader = `(function(){function go(){${plot}}if(window.Plotly){go();return;}if(!window.__fascicleLoad){window.__fascicleLoad=new Promise(function(res,rej){try{var b=atob(document.getElementById(${JSON.stringify(id + '-lib')}).textContent.trim());var u=new Uint8Array(b.length);for(var i=0;i<b.length;i++)u[i]=b.charCodeAt(i);var st=new Blob([u]).stream().pipeThrough(new DecompressionStream('gzip'));new Response(st).text().then(function(t){var d=window.define;window.define=undefined;try{(0,eval)(t);}finally{window.define=d;}res();},rej);}catch(e){rej(e);}});}window.__fascicleLoad.then(go,function(e){document.getElementById(${JSON.stringify(id)}).textContent='figure could not load plotly.js: '+e;});})();`;
    return `${div}<script type="text/plain" id="${id}-lib">${packed()}</script><script>${loader}</script>`;
  }

  /** Show in a tslab cell (or print a text description outside a notebook). */
  show(): void {
    const t = tslabDisplay();
    if (t) t.html(this.toHTML());
    else console.log(this.toString());
  }

  // save() is installed by src/plot/export.ts (which imports this module; src/index.ts loads it)

  toString(): string {
    const traces = this.spec.data.length;
    const t = plainText((this.spec.layout.title as { text?: string })?.text ?? '') || this.name;
    return `Figure "${t}" (${traces} trace${traces === 1 ? '' : 's'}); call .show() in a notebook or .save("fig.svg")`;
  }

  [inspect.custom](): string {
    return this.toString();
  }
}
