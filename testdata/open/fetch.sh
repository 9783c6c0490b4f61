#!/bin/sh
# fetch.sh: rebuilds the CSV files in this folder from the Debian packages
# they come from, and checks the result against SHA256SUMS.
#
# Run on demand only (tests never run it). Needs apt-get with Debian 12
# (bookworm) package lists, dpkg-deb, sha256sum and Rscript (Debian package
# r-base-core). Usage, from any folder:  sh testdata/open/fetch.sh
set -eu

here=$(cd "$(dirname "$0")" && pwd)
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

command -v Rscript >/dev/null 2>&1 || {
	echo "fetch.sh: Rscript not found; install the Debian package r-base-core" >&2
	exit 1
}

cd "$work"
apt-get download \
	r-cran-kernlab=0.9-32-1 \
	r-cran-mass=7.3-58.2-1 \
	r-cran-modeldata=1.1.0-1

# The .deb checksums hold for the amd64 build of kernlab and MASS (modeldata
# is architecture-independent); on another architecture only the data-file
# checks below apply.
sha256sum --ignore-missing -c <<'SUMS'
ab09291d7de965e84f808e3ae646d7043fa87e1e30cfcebec6b95d14f6828b62  r-cran-kernlab_0.9-32-1_amd64.deb
7f645471246d0925798c12d5ebc3e6dd365d01836ad4587931c916f2caf0f654  r-cran-mass_7.3-58.2-1_amd64.deb
66c2e08bb4bf695d972b1e72ea44d5af9ada3c42841793d3871017f7b896bf95  r-cran-modeldata_1.1.0-1_all.deb
SUMS

for deb in r-cran-kernlab_*.deb r-cran-mass_*.deb r-cran-modeldata_*.deb; do
	mkdir -p "root/${deb%%_*}"
	dpkg-deb -x "$deb" "root/${deb%%_*}"
done

sha256sum -c <<'SUMS'
09281b38bc7b064f63616d9056091f924f59e38aa9fd07dd3bc1af0cba9613d3  root/r-cran-kernlab/usr/lib/R/site-library/kernlab/data/spam.rda
ee86b020b6eca2a3a8f262d83751286178c089b8ae094feba3df95be104861f8  root/r-cran-mass/usr/lib/R/library/MASS/data/Rdata.rdb
d778adbf3a3f9f04863918b2bb983cd06d27c2190f8bb2945bf5afc66eab4655  root/r-cran-mass/usr/lib/R/library/MASS/data/Rdata.rdx
2ecef5e8da0f782ae4e3f65d928fe769702accffd8981cc358a3097f6736f58f  root/r-cran-modeldata/usr/lib/R/site-library/modeldata/data/Rdata.rdb
c23e1be60f2730fb526ce158a307e154c91a953169fcb8e73350c4e032e14538  root/r-cran-modeldata/usr/lib/R/site-library/modeldata/data/Rdata.rdx
SUMS

Rscript "$here/convert.R" "$work/root" "$here"
cd "$here" && sha256sum -c SHA256SUMS
