from tests.app.web.conftest import SPOT_ID, AGENCY_ID
def test_smoke(site):
    c = site.client
    for p in ["/", f"/spots/{SPOT_ID}", f"/agencies/{AGENCY_ID}", "/sources"]:
        r = c.get(p); print(p, r.status_code); open("/tmp/" + (p.strip("/").replace("/","_") or "index") + ".html", "w").write(r.text)
