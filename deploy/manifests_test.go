package deploy

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"path"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	appsv1 "k8s.io/api/apps/v1"
	autoscalingv2 "k8s.io/api/autoscaling/v2"
	corev1 "k8s.io/api/core/v1"
	policyv1 "k8s.io/api/policy/v1"
	"k8s.io/apimachinery/pkg/api/resource"
	metav1 "k8s.io/apimachinery/pkg/apis/meta/v1"
	"k8s.io/apimachinery/pkg/util/intstr"
	utilyaml "k8s.io/apimachinery/pkg/util/yaml"
	"sigs.k8s.io/yaml"
)

// The kustomizations of the kit: the base and the example overlay.
const (
	baseDir    = "kubernetes/base"
	overlayDir = "kubernetes/overlays/example"
)

// budgetAnnotation on the HorizontalPodAutoscaler states how many connections
// the database keeps for this service; the tests check the most pods a
// rollout can run at once against it.
const budgetAnnotation = "veneer/db-connection-budget"

// kustomization is the part of a kustomization file the kit uses, decoded
// strictly so that a misspelt field is an error rather than ignored.
type kustomization struct {
	APIVersion string   `json:"apiVersion"`
	Kind       string   `json:"kind"`
	Namespace  string   `json:"namespace,omitempty"`
	Resources  []string `json:"resources,omitempty"`
	Images     []struct {
		Name    string `json:"name"`
		NewName string `json:"newName"`
		NewTag  string `json:"newTag"`
	} `json:"images,omitempty"`
	ConfigMapGenerator []struct {
		Name     string   `json:"name"`
		Behavior string   `json:"behavior,omitempty"`
		Files    []string `json:"files"`
	} `json:"configMapGenerator,omitempty"`
	Patches []struct {
		Path string `json:"path"`
	} `json:"patches,omitempty"`
}

func readKustomization(dir string) (*kustomization, error) {
	name := filepath.Join(dir, "kustomization.yaml")
	data, err := os.ReadFile(name)
	if err != nil {
		return nil, err
	}
	var k kustomization
	if err := yaml.UnmarshalStrict(data, &k); err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	if k.APIVersion != "kustomize.config.k8s.io/v1beta1" || k.Kind != "Kustomization" {
		return nil, fmt.Errorf("%s: apiVersion %q kind %q, want kustomize.config.k8s.io/v1beta1 Kustomization", name, k.APIVersion, k.Kind)
	}
	return &k, nil
}

// objects are the Kubernetes objects of one manifest set, by kind.
type objects struct {
	deployments []*appsv1.Deployment
	services    []*corev1.Service
	hpas        []*autoscalingv2.HorizontalPodAutoscaler
	pdbs        []*policyv1.PodDisruptionBudget
	configMaps  []*corev1.ConfigMap
}

// decodeObjects decodes every YAML document of data strictly into the
// official type of its apiVersion and kind: an unknown field, a value of the
// wrong type or a kind the kit does not use is an error.
func decodeObjects(name string, data []byte, into *objects) error {
	r := utilyaml.NewYAMLReader(bufio.NewReader(bytes.NewReader(data)))
	for n := 1; ; n++ {
		doc, err := r.Read()
		if errors.Is(err, io.EOF) {
			return nil
		}
		if err != nil {
			return fmt.Errorf("%s: document %d: %w", name, n, err)
		}
		if len(bytes.TrimSpace(doc)) == 0 {
			continue
		}
		var tm metav1.TypeMeta
		if err := yaml.Unmarshal(doc, &tm); err != nil {
			return fmt.Errorf("%s: document %d: %w", name, n, err)
		}
		var obj any
		switch tm.APIVersion + " " + tm.Kind {
		case "apps/v1 Deployment":
			d := &appsv1.Deployment{}
			into.deployments, obj = append(into.deployments, d), d
		case "v1 Service":
			s := &corev1.Service{}
			into.services, obj = append(into.services, s), s
		case "autoscaling/v2 HorizontalPodAutoscaler":
			h := &autoscalingv2.HorizontalPodAutoscaler{}
			into.hpas, obj = append(into.hpas, h), h
		case "policy/v1 PodDisruptionBudget":
			p := &policyv1.PodDisruptionBudget{}
			into.pdbs, obj = append(into.pdbs, p), p
		case "v1 ConfigMap":
			c := &corev1.ConfigMap{}
			into.configMaps, obj = append(into.configMaps, c), c
		default:
			return fmt.Errorf("%s: document %d: apiVersion %q kind %q is not one the kit uses", name, n, tm.APIVersion, tm.Kind)
		}
		if err := yaml.UnmarshalStrict(doc, obj); err != nil {
			return fmt.Errorf("%s: document %d (%s): %w", name, n, tm.Kind, err)
		}
	}
}

func decodeFile(name string, into *objects) error {
	data, err := os.ReadFile(name)
	if err != nil {
		return err
	}
	return decodeObjects(name, data, into)
}

// TestDecodingIsStrict shows that the manifest checks can fail: the decoder
// refuses a misspelt field, a wrong type and a kind it does not know.
func TestDecodingIsStrict(t *testing.T) {
	tests := []struct {
		name, doc, want string
	}{
		{"misspelt field", `
apiVersion: apps/v1
kind: Deployment
metadata: {name: x}
spec:
  template:
    spec:
      containers:
        - name: x
          readinesProbe: {periodSeconds: 5}
`, "readinesProbe"},
		{"wrong type", `
apiVersion: v1
kind: Service
metadata: {name: x}
spec:
  ports:
    - port: "seven"
`, "port"},
		{"unknown kind", `
apiVersion: v1
kind: Pod
metadata: {name: x}
`, "Pod"},
		{"field of another version", `
apiVersion: autoscaling/v2
kind: HorizontalPodAutoscaler
metadata: {name: x}
spec:
  maxReplicas: 3
  targetCPUUtilizationPercentage: 70
`, "targetCPUUtilizationPercentage"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			err := decodeObjects("test.yaml", []byte(tt.doc), &objects{})
			if err == nil || !strings.Contains(err.Error(), tt.want) {
				t.Fatalf("decodeObjects = %v, want an error naming %q", err, tt.want)
			}
		})
	}
}

// TestManifestFiles decodes every file of both kustomizations strictly:
// resources and patches into the Kubernetes API types, config files into the
// config schema. Every YAML file in a kustomization's directory must be used
// by it, and everything it names must exist.
func TestManifestFiles(t *testing.T) {
	for _, dir := range []string{baseDir, overlayDir} {
		t.Run(dir, func(t *testing.T) {
			k, err := readKustomization(dir)
			if err != nil {
				t.Fatal(err)
			}
			used := map[string]bool{"kustomization.yaml": true}
			for _, r := range k.Resources {
				if fi, err := os.Stat(filepath.Join(dir, r)); err == nil && fi.IsDir() {
					if _, err := readKustomization(filepath.Join(dir, r)); err != nil {
						t.Errorf("resource %s: %v", r, err)
					}
					continue
				}
				used[r] = true
				if err := decodeFile(filepath.Join(dir, r), &objects{}); err != nil {
					t.Error(err)
				}
			}
			for _, p := range k.Patches {
				used[p.Path] = true
				if err := decodeFile(filepath.Join(dir, p.Path), &objects{}); err != nil {
					t.Error(err)
				}
			}
			for _, g := range k.ConfigMapGenerator {
				if g.Name != ConfigMapName {
					t.Errorf("configMapGenerator %q, want %q", g.Name, ConfigMapName)
				}
				for _, f := range g.Files {
					used[f] = true
					data, err := os.ReadFile(filepath.Join(dir, f))
					if err != nil {
						t.Error(err)
						continue
					}
					if f == configFileKey {
						if _, err := parseConfig(filepath.Join(dir, f), data); err != nil {
							t.Error(err)
						}
					}
				}
			}
			entries, err := os.ReadDir(dir)
			if err != nil {
				t.Fatal(err)
			}
			for _, e := range entries {
				if !e.IsDir() && !used[e.Name()] {
					t.Errorf("%s is in %s but its kustomization does not use it", e.Name(), dir)
				}
			}
		})
	}
}

// TestBase checks the base as written, without a kustomize tool: its
// resources, and its ConfigMap built from the generator's files the way
// kustomize builds it (file name → key).
func TestBase(t *testing.T) {
	k, err := readKustomization(baseDir)
	if err != nil {
		t.Fatal(err)
	}
	var objs objects
	for _, r := range k.Resources {
		if err := decodeFile(filepath.Join(baseDir, r), &objs); err != nil {
			t.Fatal(err)
		}
	}
	for _, g := range k.ConfigMapGenerator {
		cm := &corev1.ConfigMap{ObjectMeta: metav1.ObjectMeta{Name: g.Name}, Data: map[string]string{}}
		for _, f := range g.Files {
			data, err := os.ReadFile(filepath.Join(baseDir, f))
			if err != nil {
				t.Fatal(err)
			}
			cm.Data[f] = string(data)
		}
		objs.configMaps = append(objs.configMaps, cm)
	}
	checkObjects(t, &objs)
}

// TestRendered renders both kustomizations with the kustomize built into
// kubectl, decodes the output strictly, and checks it like the base; the
// overlay must also put everything in its namespace and set the image.
func TestRendered(t *testing.T) {
	kubectl := needTool(t, "kubectl", "kubectl 1.21 or later, whose built-in kustomize reads the patches field")
	for _, dir := range []string{baseDir, overlayDir} {
		t.Run(dir, func(t *testing.T) {
			out := runTool(t, ".", kubectl, "kustomize", dir)
			var objs objects
			if err := decodeObjects(dir+" (rendered)", out, &objs); err != nil {
				t.Fatal(err)
			}
			checkObjects(t, &objs)
			k, err := readKustomization(dir)
			if err != nil {
				t.Fatal(err)
			}
			if k.Namespace == "" {
				return
			}
			for _, m := range allMeta(&objs) {
				if m.Namespace != k.Namespace {
					t.Errorf("%s is in namespace %q, want %q", m.Name, m.Namespace, k.Namespace)
				}
			}
			for _, d := range objs.deployments {
				for _, c := range d.Spec.Template.Spec.Containers {
					for _, img := range k.Images {
						if want := img.NewName + ":" + img.NewTag; c.Image != want {
							t.Errorf("container %s: image %q, want %q", c.Name, c.Image, want)
						}
					}
				}
			}
		})
	}
}

func allMeta(o *objects) []metav1.ObjectMeta {
	var ms []metav1.ObjectMeta
	for _, d := range o.deployments {
		ms = append(ms, d.ObjectMeta)
	}
	for _, s := range o.services {
		ms = append(ms, s.ObjectMeta)
	}
	for _, h := range o.hpas {
		ms = append(ms, h.ObjectMeta)
	}
	for _, p := range o.pdbs {
		ms = append(ms, p.ObjectMeta)
	}
	for _, c := range o.configMaps {
		ms = append(ms, c.ObjectMeta)
	}
	return ms
}

// checkObjects checks one complete manifest set: each object on its own
// against the contract, and the objects against each other (selectors,
// port names, volume sources, replica counts and connection budgets).
func checkObjects(t *testing.T, o *objects) {
	t.Helper()
	if len(o.deployments) != 1 || len(o.services) != 1 || len(o.hpas) != 1 || len(o.pdbs) != 1 || len(o.configMaps) != 1 {
		t.Fatalf("want one each of Deployment, Service, HorizontalPodAutoscaler, PodDisruptionBudget and ConfigMap; have %d, %d, %d, %d, %d",
			len(o.deployments), len(o.services), len(o.hpas), len(o.pdbs), len(o.configMaps))
	}
	d, svc, hpa, pdb, cm := o.deployments[0], o.services[0], o.hpas[0], o.pdbs[0], o.configMaps[0]
	pod := d.Spec.Template
	if len(pod.Spec.Containers) != 1 {
		t.Fatalf("Deployment %s: %d containers, want 1", d.Name, len(pod.Spec.Containers))
	}
	c := pod.Spec.Containers[0]

	// Selectors.
	if d.Spec.Selector == nil || !selects(d.Spec.Selector.MatchLabels, pod.Labels) {
		t.Errorf("Deployment %s: selector %v does not select its pod labels %v", d.Name, d.Spec.Selector, pod.Labels)
	}
	if !selects(svc.Spec.Selector, pod.Labels) {
		t.Errorf("Service %s: selector %v does not select the pod labels %v", svc.Name, svc.Spec.Selector, pod.Labels)
	}
	if pdb.Spec.Selector == nil || !selects(pdb.Spec.Selector.MatchLabels, pod.Labels) {
		t.Errorf("PodDisruptionBudget %s: selector does not select the pod labels %v", pdb.Name, pod.Labels)
	}

	// The port, named "http", everywhere.
	var port *corev1.ContainerPort
	for i := range c.Ports {
		if c.Ports[i].Name == "http" {
			port = &c.Ports[i]
		}
	}
	if port == nil || port.ContainerPort != Port || (port.Protocol != "" && port.Protocol != corev1.ProtocolTCP) {
		t.Fatalf("container %s: ports %v, want http on TCP %d", c.Name, c.Ports, Port)
	}
	resolves := func(p intstr.IntOrString) bool {
		return p.Type == intstr.String && p.StrVal == port.Name || p.Type == intstr.Int && p.IntVal == port.ContainerPort
	}
	if len(svc.Spec.Ports) != 1 || !resolves(svc.Spec.Ports[0].TargetPort) {
		t.Errorf("Service %s: ports %v, want one whose targetPort is the container's http port", svc.Name, svc.Spec.Ports)
	}
	for _, p := range []struct {
		what  string
		probe *corev1.Probe
		path  string
	}{
		{"readinessProbe", c.ReadinessProbe, ReadyPath},
		{"livenessProbe", c.LivenessProbe, HealthPath},
		{"startupProbe", c.StartupProbe, HealthPath},
	} {
		if p.probe == nil || p.probe.HTTPGet == nil {
			t.Errorf("container %s: %s is not an HTTP GET", c.Name, p.what)
			continue
		}
		g := p.probe.HTTPGet
		if g.Path != p.path || !resolves(g.Port) || (g.Scheme != "" && g.Scheme != corev1.URISchemeHTTP) {
			t.Errorf("container %s: %s gets %s %s on %v, want HTTP %s on the http port", c.Name, p.what, g.Scheme, g.Path, g.Port.String(), p.path)
		}
	}
	// /readyz asks the sources with a 2s limit of its own (server/server.go);
	// a probe that gives up first would fail on a slow but healthy source.
	if rp := c.ReadinessProbe; rp != nil && rp.TimeoutSeconds <= 2 {
		t.Errorf("container %s: readinessProbe timeoutSeconds %d, want more than the server's 2s check", c.Name, rp.TimeoutSeconds)
	}
	ann := pod.Annotations
	if ann["prometheus.io/scrape"] != "true" || ann["prometheus.io/port"] != strconv.Itoa(Port) || ann["prometheus.io/path"] != MetricsPath {
		t.Errorf("pod annotations %v, want prometheus.io/scrape \"true\", port %d, path %s", ann, Port, MetricsPath)
	}

	// Arguments and environment.
	if !slices.Contains(c.Args, "--"+ConfigFlag+"="+ConfigFile) {
		t.Errorf("container %s: args %q do not name the config file with --%s=%s", c.Name, c.Args, ConfigFlag, ConfigFile)
	}
	var dsnFromSecret bool
	for _, e := range c.Env {
		if strings.Contains(e.Value, "://") {
			t.Errorf("container %s: env %s holds what looks like a DSN; take it from the Secret", c.Name, e.Name)
		}
		if e.Name == DSNEnv && e.ValueFrom != nil && e.ValueFrom.SecretKeyRef != nil &&
			e.ValueFrom.SecretKeyRef.Name == SecretName && e.ValueFrom.SecretKeyRef.Key == SecretDSNKey {
			dsnFromSecret = true
		}
	}
	if !dsnFromSecret {
		t.Errorf("container %s: %s does not come from Secret %s key %s", c.Name, DSNEnv, SecretName, SecretDSNKey)
	}

	// Resources: requests and limits for CPU and memory, a soft heap limit
	// below the memory limit.
	for _, r := range []corev1.ResourceName{corev1.ResourceCPU, corev1.ResourceMemory} {
		req, okReq := c.Resources.Requests[r]
		lim, okLim := c.Resources.Limits[r]
		if !okReq || !okLim || req.Cmp(lim) > 0 {
			t.Errorf("container %s: %s request %v and limit %v, want both with request <= limit", c.Name, r, req.String(), lim.String())
		}
	}
	if mem, ok := c.Resources.Limits[corev1.ResourceMemory]; ok {
		soft, err := goMemLimit(c.Env)
		switch {
		case err != nil:
			t.Errorf("container %s: %v", c.Name, err)
		case soft.Cmp(mem) >= 0:
			t.Errorf("container %s: GOMEMLIMIT %v is not below the memory limit %v", c.Name, soft.String(), mem.String())
		}
	}

	// Security: non-root (the image's numeric user), read-only root
	// filesystem, no privilege escalation, no capabilities, no API token.
	psc := pod.Spec.SecurityContext
	if psc == nil || psc.RunAsNonRoot == nil || !*psc.RunAsNonRoot || psc.RunAsUser == nil || *psc.RunAsUser != UID {
		t.Errorf("pod securityContext %+v, want runAsNonRoot and runAsUser %d", psc, UID)
	}
	csc := c.SecurityContext
	if csc == nil || csc.ReadOnlyRootFilesystem == nil || !*csc.ReadOnlyRootFilesystem ||
		csc.AllowPrivilegeEscalation == nil || *csc.AllowPrivilegeEscalation ||
		csc.Capabilities == nil || !slices.Contains(csc.Capabilities.Drop, "ALL") {
		t.Errorf("container %s: securityContext %+v, want readOnlyRootFilesystem, no privilege escalation, capabilities drop ALL", c.Name, csc)
	}
	if a := pod.Spec.AutomountServiceAccountToken; a == nil || *a {
		t.Errorf("pod: automountServiceAccountToken is not false; veneer never calls the Kubernetes API")
	}

	// Shutdown: preStop sleep, then the server's drain, within the grace
	// period.
	if l := c.Lifecycle; l == nil || l.PreStop == nil || l.PreStop.Sleep == nil ||
		time.Duration(l.PreStop.Sleep.Seconds)*time.Second != PreStopSleep {
		t.Errorf("container %s: preStop is not a %v sleep", c.Name, PreStopSleep)
	}
	need := PreStopSleep + DrainTimeout + ShutdownMargin
	grace := time.Duration(0)
	if g := pod.Spec.TerminationGracePeriodSeconds; g != nil {
		grace = time.Duration(*g) * time.Second
	}
	if grace < need {
		t.Errorf("pod: terminationGracePeriodSeconds %v, want at least %v (preStop %v + drain %v + margin %v)",
			grace, need, PreStopSleep, DrainTimeout, ShutdownMargin)
	}

	// Volumes: the ConfigMap at ConfigDir, the Secret's tokens at
	// TokensFile; nothing writable but scratch space.
	vols := map[string]corev1.Volume{}
	for _, v := range pod.Spec.Volumes {
		vols[v.Name] = v
	}
	var configMounted, tokensMounted bool
	for _, m := range c.VolumeMounts {
		v, ok := vols[m.Name]
		if !ok {
			t.Errorf("container %s: mount %s names no volume", c.Name, m.Name)
			continue
		}
		switch {
		case v.ConfigMap != nil:
			configMounted = configMounted || m.MountPath == ConfigDir && v.ConfigMap.Name == cm.Name
		case v.Secret != nil:
			for _, it := range v.Secret.Items {
				tokensMounted = tokensMounted || v.Secret.SecretName == SecretName && it.Key == SecretTokensKey &&
					path.Join(m.MountPath, it.Path) == TokensFile
			}
		case v.EmptyDir != nil:
			if v.EmptyDir.SizeLimit == nil {
				t.Errorf("volume %s: an emptyDir without sizeLimit can fill the node's disk", v.Name)
			}
			continue
		}
		if !m.ReadOnly {
			t.Errorf("container %s: mount %s at %s is writable", c.Name, m.Name, m.MountPath)
		}
	}
	if !configMounted {
		t.Errorf("container %s: ConfigMap %s is not mounted at %s", c.Name, cm.Name, ConfigDir)
	}
	if !tokensMounted {
		t.Errorf("container %s: Secret %s key %s is not mounted as %s", c.Name, SecretName, SecretTokensKey, TokensFile)
	}

	// The config file in the ConfigMap.
	cfg, err := parseConfig(cm.Name+"/"+configFileKey, []byte(cm.Data[configFileKey]))
	if err != nil {
		t.Fatal(err)
	}
	checkConfig(t, cm.Name+"/"+configFileKey, cfg, cm.Data)

	// Scaling: the autoscaler owns the replica count, keeps two replicas so
	// that the disruption budget always leaves one serving, and never opens
	// more connections than the database keeps for the service.
	if d.Spec.Replicas != nil {
		t.Errorf("Deployment %s: replicas is set; the HorizontalPodAutoscaler owns it", d.Name)
	}
	ref := hpa.Spec.ScaleTargetRef
	if ref.APIVersion != "apps/v1" || ref.Kind != "Deployment" || ref.Name != d.Name {
		t.Errorf("HorizontalPodAutoscaler %s scales %s %s %s, want apps/v1 Deployment %s", hpa.Name, ref.APIVersion, ref.Kind, ref.Name, d.Name)
	}
	minR := int32(1)
	if hpa.Spec.MinReplicas != nil {
		minR = *hpa.Spec.MinReplicas
	}
	if minR < 2 || hpa.Spec.MaxReplicas < minR || len(hpa.Spec.Metrics) == 0 {
		t.Errorf("HorizontalPodAutoscaler %s: replicas %d..%d with %d metrics, want at least 2, max >= min, and a metric", hpa.Name, minR, hpa.Spec.MaxReplicas, len(hpa.Spec.Metrics))
	}
	mu := pdb.Spec.MaxUnavailable
	if mu == nil || mu.Type != intstr.Int || mu.IntVal < 1 || mu.IntVal >= minR {
		t.Errorf("PodDisruptionBudget %s: maxUnavailable %v, want a count from 1 to below minReplicas %d", pdb.Name, mu, minR)
	}
	surge := int32(0)
	if ru := d.Spec.Strategy.RollingUpdate; ru != nil && ru.MaxSurge != nil {
		if ru.MaxSurge.Type != intstr.Int {
			t.Errorf("Deployment %s: maxSurge %v: give a count, so that the connection budget can be checked", d.Name, ru.MaxSurge)
		}
		surge = ru.MaxSurge.IntVal
	}
	budget, err := strconv.Atoi(hpa.Annotations[budgetAnnotation])
	if err != nil {
		t.Errorf("HorizontalPodAutoscaler %s: annotation %s: %v", hpa.Name, budgetAnnotation, err)
	} else if len(cfg.Sources) == 1 {
		conns := cfg.Sources[0].MaxConns
		if most := int(hpa.Spec.MaxReplicas+surge) * conns; most > budget {
			t.Errorf("(%d replicas + %d surge) x %d connections = %d, over the database budget of %d",
				hpa.Spec.MaxReplicas, surge, conns, most, budget)
		}
	}
}

// selects reports whether every label of the selector is on the object.
func selects(selector, labels map[string]string) bool {
	if len(selector) == 0 {
		return false
	}
	for k, v := range selector {
		if labels[k] != v {
			return false
		}
	}
	return true
}

// goMemLimit reads the GOMEMLIMIT variable: bytes, with an optional binary
// suffix (KiB, MiB, GiB, TiB) as the Go runtime reads it.
func goMemLimit(env []corev1.EnvVar) (resource.Quantity, error) {
	for _, e := range env {
		if e.Name != "GOMEMLIMIT" {
			continue
		}
		v := e.Value
		if strings.HasSuffix(v, "iB") {
			v = strings.TrimSuffix(v, "B")
		} else {
			v = strings.TrimSuffix(v, "B")
			if _, err := strconv.ParseInt(v, 10, 64); err != nil {
				return resource.Quantity{}, fmt.Errorf("GOMEMLIMIT %q is not bytes with a KiB/MiB/GiB/TiB suffix", e.Value)
			}
		}
		q, err := resource.ParseQuantity(v)
		if err != nil {
			return resource.Quantity{}, fmt.Errorf("GOMEMLIMIT %q: %w", e.Value, err)
		}
		return q, nil
	}
	return resource.Quantity{}, errors.New("GOMEMLIMIT is not set")
}
