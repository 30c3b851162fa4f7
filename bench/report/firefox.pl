#!/usr/bin/perl
# Opens a report.html from disk in headless Firefox (Debian's firefox-esr,
# driven over Marionette by libfirefox-marionette-perl), waits until the
# page has drawn, checks that it decoded its data and that the total's
# chart has forecast points, selects a node, and saves a screenshot.
# Exits 1 on any failure. A manual check beside the Chromium test that CI
# runs: apt-get install firefox-esr libfirefox-marionette-perl, then
#   perl bench/report/firefox.pl trueup-demo/report.html /tmp/firefox.png
use strict;
use warnings;
use Cwd qw(abs_path);
use Time::HiRes qw(sleep);
use Firefox::Marionette;

my ($report, $shot) = @ARGV;
die "usage: firefox.pl REPORT.html [SHOT.png]\n" unless $report && -f $report;
my $ff = Firefox::Marionette->new(visible => 0, width => 1200, height => 1500);
$ff->go('file://' . abs_path($report));
my $ready = 0;
for (1 .. 300) {
    $ready = $ff->script('return !!(window.trueupReport && (window.trueupReport.ready || window.trueupReport.error))');
    last if $ready;
    sleep 0.1;
}
my $error = $ff->script('return window.trueupReport ? (window.trueupReport.error || "") : "no page state"') // '';
my $points = $ff->script('var c = document.getElementById("total-chart"); return c && c.uplot ? c.uplot.data[3].filter(v => v != null).length : 0');
my $total = $ff->script('return document.getElementById("node-chart").dataset.node');
$ff->script('window.trueupReport.select(window.trueupReport.nodeCount - 1, true)');
my $after = $ff->script('return document.getElementById("node-chart").dataset.node');
print "Firefox ", $ff->browser_version, ": ready $ready, forecast points on the total's chart $points, node view $total -> $after\n";
if ($shot) {
    open my $fh, '>', $shot or die "$shot: $!\n";
    binmode $fh;
    print {$fh} $ff->selfie(raw => 1);
    close $fh;
}
$ff->quit;
if (!$ready || $error ne '' || !$points || $after eq $total) {
    print "FAILED", ($error ne '' ? ": $error" : ''), "\n";
    exit 1;
}
print "ok\n";
